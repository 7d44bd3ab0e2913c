"""Organism presets: published log-linear (D, z) kinetics in beef and a default target.

Each preset names the study its numbers come from. "Derived fit" marks a value computed here
from published data rather than printed in the source: a least-squares line through
``log10(D)`` (or ``log10(hold time / log reduction)``) against temperature, evaluated at the
reference temperature 60 degC. The fits are repeated independently in
tests/physics/test_lethality.py.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType

from obvert.food.lethality import LethalityModel


@dataclass(frozen=True)
class OrganismPreset:
    """Log-linear kinetics of one organism in one food, with a default target.

    Attributes
    ----------
    organism : str
        Target organism.
    matrix : str
        Food in which the kinetics were measured.
    d_ref_s : float
        Decimal reduction time at ``t_ref_c``, s.
    t_ref_c : float
        Reference temperature, degC.
    z_k : float
        z value, K.
    target_log_reduction : float
        Default log10 reduction a cook program must reach, -.
    source : str
        Citation of the published data and of how each number was obtained.
    """

    organism: str
    matrix: str
    d_ref_s: float
    t_ref_c: float
    z_k: float
    target_log_reduction: float
    source: str

    def model(self, cap_c: float = 90.0) -> LethalityModel:
        """Lethality model with these kinetics; ``cap_c`` as in :class:`LethalityModel`."""
        return LethalityModel(d_ref_s=self.d_ref_s, t_ref_c=self.t_ref_c, z_k=self.z_k, cap_c=cap_c)


_FSIS_1999 = (
    'USDA FSIS (1999), "Appendix A: Compliance Guidelines for Meeting Lethality Performance '
    'Standards for Certain Meat and Poultry Products", time-temperature table for cooked beef'
)

PRESETS: Mapping[str, OrganismPreset] = MappingProxyType(
    {
        "salmonella_beef_7log": OrganismPreset(
            organism="Salmonella",
            matrix="cooked beef",
            d_ref_s=103.6,
            t_ref_c=60.0,
            z_k=5.586,
            target_log_reduction=7.0,
            source=(
                f"{_FSIS_1999}, 7-log Salmonella column, 54.4-69.4 degC rows (the 0 s row at "
                "70 degC cannot be fitted). Derived fit: least squares of log10(time/7) "
                "against temperature; D(60 degC) and z are not published values."
            ),
        ),
        "salmonella_ground_beef": OrganismPreset(
            organism="Salmonella",
            matrix="ground beef",
            d_ref_s=101.9,
            t_ref_c=60.0,
            z_k=5.61,
            target_log_reduction=6.5,
            source=(
                "Goodfellow, S. J. and Brown, W. L. (1978), J. Food Prot. 41:598, D values at "
                "51.6, 57.2 and 62.7 degC (mid-points of the published ranges). Derived fit: "
                "D(60 degC) and z by least squares of log10(D). Target 6.5 log: USDA FSIS "
                "(1999) lethality performance standard for cooked beef (from memory)."
            ),
        ),
        "ecoli_o157_lean_beef": OrganismPreset(
            organism="Escherichia coli O157:H7",
            matrix="ground beef, 90 % lean",
            d_ref_s=156.4,
            t_ref_c=60.0,
            z_k=6.0,
            target_log_reduction=5.0,
            source=(
                "Juneja, V. K., Snyder, O. P. and Marmer, B. S. (1997), Int. J. Food "
                "Microbiol. 35:231: z = 6.0 degC as published; D(60 degC) is a derived fit "
                "(least squares of log10(D) at the published z over the D values at 55-65 "
                "degC; the published D(60 degC) is 3.17 min). Target 5 log: basis of the "
                "retail comminuted-meat cooking times (from memory)."
            ),
        ),
        "ecoli_o157_beef_2pct_fat": OrganismPreset(
            organism="Escherichia coli O157:H7",
            matrix="ground beef, 2 % fat",
            d_ref_s=68.7,
            t_ref_c=60.0,
            z_k=4.60,
            target_log_reduction=5.0,
            source=(
                "Line, J. E. et al. (1991), J. Food Prot. 54:762, D values at 51.7, 57.2 and "
                "62.8 degC in 2 % fat beef. Derived fit: D(60 degC) and z by least squares "
                "of log10(D) (published z about 4.6 degC). Target 5 log as above (from memory)."
            ),
        ),
        "ecoli_o157_beef_30pct_fat": OrganismPreset(
            organism="Escherichia coli O157:H7",
            matrix="ground beef, 30.5 % fat",
            d_ref_s=104.2,
            t_ref_c=60.0,
            z_k=4.70,
            target_log_reduction=5.0,
            source=(
                "Line, J. E. et al. (1991), J. Food Prot. 54:762, D values at 51.7, 57.2 and "
                "62.8 degC in 30.5 % fat beef. Derived fit: D(60 degC) and z by least squares "
                "of log10(D) (published z about 4.6 degC). Target 5 log as above (from memory)."
            ),
        ),
    }
)


def preset(name: str) -> OrganismPreset:
    """Return the organism preset called ``name``.

    Raises
    ------
    ValueError
        If ``name`` is not a preset; the message lists the allowed names.
    """
    try:
        return PRESETS[name]
    except (KeyError, TypeError):
        allowed = ", ".join(sorted(PRESETS))
        raise ValueError(f"organism preset {name!r} is unknown; allowed: {allowed}") from None
