"""The names a basis file is known by: the format name and layout version (docs/file-format.md)
and the integral blocks an export may hold.  A leaf module, shared by :mod:`relbasis.writer` and
:mod:`relbasis.reader`.
"""

FORMAT = "relbasis-basis"
LAYOUT_VERSION = 1
BLOCKS = ("dipole", "hyperfine", "slater")
