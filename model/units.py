"""Unit conversions: the only place where values cross into kPa, g/L or mmol/L.

Inside ``model/`` pressures are mmHg, haemoglobin g/dL and contents mL O2/dL.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import NamedTuple

import numpy as np

MMHG_PER_KPA = 760.0 / 101.325
"""mmHg in one kPa [mmHg/kPa]; clinical mmHg taken equal to the torr (101325/760 Pa)."""

HB_MMOL_L_PER_G_DL = 0.62056
"""Haemoglobin monomer mmol/L per g/dL [-]: 10 / 16.1145 (tetramer 64 458 g/mol)."""

UNIT_VARIANTS: dict[str, tuple[str, float, str]] = {
    "_kpa": ("_mmhg", MMHG_PER_KPA, "kPa"),
    "_g_l": ("_g_dl", 0.1, "g/L"),
    "_mmol_l": ("_g_dl", 1.0 / HB_MMOL_L_PER_G_DL, "mmol/L"),
    "_percent": ("", 0.01, "%"),
}
"""Suffix of a key given in another unit -> (suffix of the canonical key, factor from that
unit to the canonical one, the unit's label).

``paco2_kpa`` is ``paco2_mmhg`` in kPa, ``hb_g_l`` is ``hb_g_dl`` in g/L, ``sao2_percent`` is
the fraction ``sao2`` in %. ``_mmol_l`` beside a ``_g_dl`` key is haemoglobin monomer
(haemoglobin is the model's only g/dL quantity). Every file format and the page address read
their variants through :func:`unit_variants`, so a suffix means one unit and one factor
everywhere.
"""


class UnitVariant(NamedTuple):
    """A key that gives a canonical key's quantity in another unit."""

    key: str
    """The canonical key (``paco2_mmhg`` for ``paco2_kpa``)."""
    factor: float
    """Multiply a value in :attr:`unit` by this to get the canonical unit [-]."""
    unit: str
    """Label of the variant's unit (``"kPa"``)."""

    def to_canonical(self, value):
        """A value in :attr:`unit` -> the canonical key's unit (float or array alike).

        >>> UnitVariant("hb_g_dl", 0.1, "g/L").to_canonical(150.0)
        15.0
        """
        return value * self.factor

    def from_canonical(self, value):
        """A value in the canonical key's unit -> :attr:`unit` (for ranges shown to people).

        >>> UnitVariant("hb_g_dl", 0.1, "g/L").from_canonical(25.0)
        250.0
        """
        return value / self.factor


_IMPLICIT = tuple(s for s, (canonical, _, _) in UNIT_VARIANTS.items() if canonical)


def unit_variants(key: str, suffixes: Iterable[str] | None = None) -> dict[str, UnitVariant]:
    """The keys that give canonical ``key`` in other units: variant key -> :class:`UnitVariant`.

    A suffix of :data:`UNIT_VARIANTS` applies when ``key`` ends in its canonical suffix.
    ``suffixes`` picks the ones a format accepts (default: every suffix with a canonical
    suffix, i.e. not ``"_percent"``, which must be asked for since nothing in a name says
    that a quantity is a fraction). ``key`` must be in the canonical unit itself, not per
    that unit (``diffusing_capacity_ml_min_mmhg`` has no kPa variant).

    Examples
    --------
    >>> unit_variants("paco2_mmhg")
    {'paco2_kpa': UnitVariant(key='paco2_mmhg', factor=7.500616827041697, unit='kPa')}
    >>> list(unit_variants("hb_g_dl")), list(unit_variants("hb_g_dl", ("_g_l",)))
    (['hb_g_l', 'hb_mmol_l'], ['hb_g_l'])
    >>> unit_variants("sao2", ("_percent",))["sao2_percent"].to_canonical(97.0)
    0.97
    """
    out: dict[str, UnitVariant] = {}
    for suffix in _IMPLICIT if suffixes is None else suffixes:
        canonical, factor, unit = UNIT_VARIANTS[suffix]
        if key.endswith(canonical):
            stem = key[: len(key) - len(canonical)]
            out[stem + suffix] = UnitVariant(key, factor, unit)
    return out


def mmhg_to_kpa(p_mmhg):
    """Pressure [mmHg] -> [kPa].

    >>> round(float(mmhg_to_kpa(760.0)), 3)
    101.325
    """
    return np.asarray(p_mmhg, dtype=float) / MMHG_PER_KPA


def kpa_to_mmhg(p_kpa):
    """Pressure [kPa] -> [mmHg].

    >>> round(float(kpa_to_mmhg(13.3)), 2)
    99.76
    """
    return np.asarray(p_kpa, dtype=float) * MMHG_PER_KPA


def hb_g_dl_to_g_l(hb_g_dl):
    """Haemoglobin [g/dL] -> [g/L].

    >>> float(hb_g_dl_to_g_l(15.0))
    150.0
    """
    return np.asarray(hb_g_dl, dtype=float) * 10.0


def hb_g_l_to_g_dl(hb_g_l):
    """Haemoglobin [g/L] -> [g/dL].

    >>> float(hb_g_l_to_g_dl(150.0))
    15.0
    """
    return np.asarray(hb_g_l, dtype=float) / 10.0


def hb_g_dl_to_mmol_l(hb_g_dl):
    """Haemoglobin [g/dL] -> monomer [mmol/L].

    >>> round(float(hb_g_dl_to_mmol_l(15.0)), 3)
    9.308
    """
    return np.asarray(hb_g_dl, dtype=float) * HB_MMOL_L_PER_G_DL


def hb_mmol_l_to_g_dl(hb_mmol_l):
    """Haemoglobin monomer [mmol/L] -> [g/dL].

    >>> round(float(hb_mmol_l_to_g_dl(9.308)), 2)
    15.0
    """
    return np.asarray(hb_mmol_l, dtype=float) / HB_MMOL_L_PER_G_DL
