"""relbasis: finite bases of Dirac orbitals for relativistic atomic-structure work.

The Python API mirrors the command line: ``relbasis.solve(config)`` returns the sorted spectra
of every requested symmetry kappa; ``relbasis.load_config(path)`` reads and validates a TOML
config; ``relbasis.critical_charge(nucleus, mass_number, n, kappa)`` finds the charge at which
a level reaches the negative continuum.  Levels are computed for the stated model (nuclear charge distribution, no QED) and
must be validated before use in publications or safety-related work.
"""

from .version import __version__

import os as _os

# The matrices here have a few hundred rows: one BLAS thread is faster and far steadier than
# several (measured 20x on a loaded 2-core machine).  Parallel work belongs one level up,
# across symmetries and bases.  Only a default: a value the user set is kept, and it takes
# effect only when relbasis is imported before numpy.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    _os.environ.setdefault(_var, "1")

from .config import Config, BasisSpec, IonSpec, SolveSpec, from_dict as config_from_dict, load as load_config  # noqa: E402
from .errors import InputError  # noqa: E402
from .solver import Solution, solve  # noqa: E402
from .writer import export  # noqa: E402
from .reader import load  # noqa: E402
from .critical import CriticalCharge, critical_charge  # noqa: E402
from .perturbation import SecondOrder, second_order  # noqa: E402

__all__ = ["__version__", "solve", "Solution", "Config", "IonSpec", "BasisSpec", "SolveSpec",
           "load_config", "config_from_dict", "InputError", "export", "load",
           "critical_charge", "CriticalCharge", "second_order", "SecondOrder"]
