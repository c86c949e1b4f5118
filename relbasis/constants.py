"""Physical constants in atomic units (hartree, bohr, electron mass, hbar = e = 1).

Values come from :mod:`scipy.constants`, which carries one CODATA adjustment; the edition is
identified from the fine-structure constant so that outputs can state it.
"""

from scipy import constants as _sc

ALPHA: float = _sc.fine_structure
"""Fine-structure constant alpha."""

C: float = 1.0 / ALPHA
"""Speed of light in atomic units, c = 1/alpha."""

HARTREE_EV: float = _sc.physical_constants["Hartree energy in eV"][0]
"""One hartree in electronvolts."""

BOHR_FM: float = _sc.physical_constants["Bohr radius"][0] * 1e15
"""One bohr in femtometres."""

FM_BOHR: float = 1.0 / BOHR_FM
"""One femtometre in bohr."""

# alpha of each CODATA adjustment, to name the edition scipy ships (common practice: the
# adjustments are published every four years).
_EDITIONS = {
    7.2973525643e-3: "2022",
    7.2973525693e-3: "2018",
    7.2973525664e-3: "2014",
    7.2973525698e-3: "2010",
}
CODATA: str = next((ed for a, ed in _EDITIONS.items() if abs(a - ALPHA) < 1e-16), "unknown")
"""CODATA edition of the constants in use, e.g. ``"2022"``."""


def as_dict() -> dict:
    """The constants block written into every JSON and HDF5 output."""
    return {"alpha": ALPHA, "c": C, "hartree_eV": HARTREE_EV, "bohr_fm": BOHR_FM, "codata": CODATA}
