"""Errors that relbasis raises for input a user can fix.

Every problem with a config file, a command-line flag or a Python argument is an
:class:`InputError` whose message is one line naming the offending key or value and what
would be valid.  The command line prints that line and exits with status 2.  A message that
names a setting to change names it in both forms (:func:`option`), e.g. ``force=True / --force``.
"""


def option(python: str, flag: str) -> str:
    """A setting named in both forms, ``force=True / --force``: the Python parameter, then the
    command-line flag.  Messages that tell the user to change a setting use it, since the same
    check runs behind ``relbasis.solve(...)`` and behind ``relbasis solve ...``."""
    return f"{python} / {flag}"


class InputError(ValueError):
    """Bad input: the message names the key or value and what would be valid."""


class ConfigError(InputError):
    """A config file or mapping has an unknown key, a wrong type or a value out of range."""


class PhysicsRangeError(InputError):
    """The requested model lies outside what the physics allows (e.g. Z*alpha >= 1, point nucleus)."""


class MissingLevelError(InputError, KeyError):
    """A level asked for by n is not in the spectrum (the basis did not produce it)."""

    def __str__(self) -> str:  # KeyError would quote the message
        return str(self.args[0]) if self.args else ""
