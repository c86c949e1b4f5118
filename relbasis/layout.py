"""The names a basis file is known by: the format name and layout versions (docs/file-format.md)
and the integral blocks an export may hold.  A leaf module, shared by :mod:`relbasis.writer` and
:mod:`relbasis.reader`.

A file without a core (the bare nucleus) carries ``LAYOUT_VERSION`` (1), so that a reader written
for those files keeps reading them; a file with a Dirac–Hartree–Fock core carries
``CORE_LAYOUT_VERSION`` (2): its roots belong to the frozen-core Hamiltonian, which a reader of
version 1 would take for the bare nucleus, so such a reader must refuse it.
"""

FORMAT = "relbasis-basis"
LAYOUT_VERSION = 1
CORE_LAYOUT_VERSION = 2
READABLE_VERSIONS = (LAYOUT_VERSION, CORE_LAYOUT_VERSION)
CORE_GROUP = "core"
BLOCKS = ("dipole", "hyperfine", "slater")
