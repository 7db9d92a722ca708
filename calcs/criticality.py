"""Stoessel criticality classes, severity and probability scales, risk-matrix cell (METHODS.md §4).

Class wording and the scale boundaries are [MEMORY] per METHODS.md (Stoessel
1993/2008, not confirmed from the texts). Interval convention of the scales,
chosen here and documented: every level is a half-open interval [lower, upper)
of its measure. For severity (ΔT_ad) a value on a boundary therefore goes to
the more severe level (50 K is "medium"); for probability (TMR_ad at MTSR) a
value on a boundary goes to the less probable level, as the rule "TMR_ad ≥ 24 h
→ low" of METHODS.md §8 states. Note that the 4-level table prints "> 400 K"
for "catastrophic"; here exactly 400 K is already "catastrophic".

The risk matrix is an organisational choice: the default below is labelled
so, and a site configures its own through :class:`RiskMatrix`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np

from calcs.constants import HOUR

REFERENCES = ("stoessel1993", "stoessel2008")


@dataclass(frozen=True)
class Scale:
    """An ordered scale: ``labels[i]`` covers [boundaries[i-1], boundaries[i]) of the measure.

    ``ascending`` is True when a larger measure means a worse level (severity
    from ΔT_ad) and False when a larger measure means a better level
    (probability from TMR). ``coarse`` maps each label to the 3-level label used
    by the default risk matrix.
    """

    name: str
    boundaries: tuple[float, ...]
    labels: tuple[str, ...]  # in order of increasing measure
    coarse: Mapping[str, str]
    unit: str

    def classify(self, measure: float) -> str:
        """Return the label whose interval [lower, upper) holds ``measure``."""
        for bound, label in zip(self.boundaries, self.labels, strict=False):
            if measure < bound:
                return label
        return self.labels[-1]


# The scale boundaries are as remembered from Stoessel 2008, ch. 3 (METHODS.md §4.2 [MEMORY]);
# the labels cite the chapter because a signed dossier prints them.
SEVERITY_3 = Scale(
    "severity 3-level (Stoessel 2008, ch. 3)", (50.0, 200.0),
    ("low", "medium", "high"), {"low": "low", "medium": "medium", "high": "high"}, "K",
)
SEVERITY_4 = Scale(
    "severity 4-level (Stoessel 2008, ch. 3)", (50.0, 200.0, 400.0),
    ("negligible", "medium", "critical", "catastrophic"),
    {"negligible": "low", "medium": "medium", "critical": "high", "catastrophic": "high"}, "K",
)
PROBABILITY_3 = Scale(
    "probability 3-level (Stoessel 2008, ch. 3)", (8 * HOUR, 24 * HOUR),
    ("high", "medium", "low"), {"high": "high", "medium": "medium", "low": "low"}, "s",
)
PROBABILITY_6 = Scale(
    "probability 6-level (Stoessel 2008, ch. 3, after Gygax)",
    (1 * HOUR, 8 * HOUR, 24 * HOUR, 50 * HOUR, 100 * HOUR),
    ("frequent", "probable", "occasional", "seldom", "remote", "almost impossible"),
    {"frequent": "high", "probable": "high", "occasional": "medium", "seldom": "low",
     "remote": "low", "almost impossible": "low"}, "s",
)
SCALES = {"severity:3": SEVERITY_3, "severity:4": SEVERITY_4,
          "probability:3": PROBABILITY_3, "probability:6": PROBABILITY_6}


def _default_cells() -> dict[tuple[str, str], str]:
    u, c, a = "unacceptable", "conditionally acceptable", "acceptable"
    return {
        ("high", "high"): u, ("high", "medium"): u, ("high", "low"): c,
        ("medium", "high"): u, ("medium", "medium"): c, ("medium", "low"): a,
        ("low", "high"): c, ("low", "medium"): a, ("low", "low"): a,
    }


@dataclass(frozen=True)
class RiskMatrix:
    """Severity × probability → cell label; keyed by the 3-level (coarse) labels by default.

    ``cells`` may also be keyed by the labels of a finer scale; a look-up tries
    the fine labels first, then the coarse ones.
    """

    cells: Mapping[tuple[str, str], str] = field(default_factory=_default_cells)
    label: str = "default assignment: organisational choice, configure per site"


DEFAULT_RISK_MATRIX = RiskMatrix()


def criticality_class(
    process_temperature_k: float | None, mtsr_k: float | None, mtt_k: float | None,
    td24_k: float | None,
) -> int | None:
    """Stoessel criticality class 1-5 from T_p, MTSR, MTT and TD24.

    Equation (METHODS.md §4.1 algorithm, ties to the more critical class)::

        if MTSR < TD24: class = (1 if MTT < TD24 else 2) if MTSR < MTT else 3
        else:           class = 4 if MTT < TD24 else 5

    Parameters
    ----------
    process_temperature_k : float or None
        T_p [K] (not needed for the class; see :func:`td24_at_or_below_process_temperature`).
    mtsr_k : float or None
        MTSR [K].
    mtt_k : float or None
        Maximum technical temperature MTT [K].
    td24_k : float or None
        TD24 [K].

    Returns
    -------
    int or None
        The class, or ``None`` when MTSR, MTT or TD24 is missing.

    Validity: the scheme assumes T_p below all three; a TD24 at or below T_p is
    flagged separately.

    Examples
    --------
    >>> criticality_class(303.15, 353.15, 383.15, 423.15)  # METHODS.md C4.1 row 1
    1
    >>> criticality_class(303.15, 423.15, 383.15, 423.15)  # tie MTSR = TD24 -> more critical
    4

    References
    ----------
    Stoessel 1993, Chem. Eng. Prog. 89(10) 68-75; Stoessel 2008 ch. 3 (from memory).
    """
    if mtsr_k is None or mtt_k is None or td24_k is None:
        return None
    if mtsr_k < td24_k:
        if mtsr_k < mtt_k:
            return 1 if mtt_k < td24_k else 2
        return 3
    return 4 if mtt_k < td24_k else 5



def _class_or_zero(mtsr_k: float, mtt_k: float, td24_k: float) -> int:
    def known(value: float) -> float | None:
        return None if np.isnan(value) else float(value)

    return criticality_class(None, known(mtsr_k), known(mtt_k), known(td24_k)) or 0


# One rule, element by element: the array form must never become a second copy of it.
_class_grid = np.vectorize(_class_or_zero, otypes=[int])


def criticality_classes(mtsr_k, mtt_k, td24_k):
    """Stoessel criticality class for arrays of MTSR, MTT and TD24 (0 where one is unknown).

    Equation: :func:`criticality_class` applied element by element (METHODS.md §4.1, ties
    to the more critical class); NaN stands for an unknown value.

    Parameters
    ----------
    mtsr_k : array_like
        MTSR [K] (NaN unknown).
    mtt_k : array_like
        MTT [K] (NaN unknown); broadcasts.
    td24_k : array_like
        TD24 [K] (NaN unknown); broadcasts.

    Returns
    -------
    numpy.ndarray
        Integer classes 1-5, 0 where an input is unknown.

    Validity: as :func:`criticality_class`, element by element.

    Examples
    --------
    >>> criticality_classes([353.15, 423.15], 383.15, 423.15).tolist()  # C4.1, tie
    [1, 4]

    References
    ----------
    Stoessel 1993; Stoessel 2008 ch. 3 (from memory); METHODS.md §4.1.
    """
    mtsr, mtt, td = np.broadcast_arrays(*(np.asarray(v, dtype=float)
                                          for v in (mtsr_k, mtt_k, td24_k)))
    if mtsr.size == 0:
        return np.zeros(mtsr.shape, dtype=int)
    return np.asarray(_class_grid(mtsr, mtt, td))


def td24_at_or_below_process_temperature(
    process_temperature_k: float | None, td24_k: float | None
) -> bool:
    """Flag a TD24 at or below the process temperature (unsafe outside the class scheme).

    Equation: flag = TD24 ≤ T_p.

    Parameters
    ----------
    process_temperature_k : float or None
        T_p [K].
    td24_k : float or None
        TD24 [K].

    Returns
    -------
    bool
        True when both are known and TD24 ≤ T_p.

    Validity: any temperatures.

    Examples
    --------
    >>> td24_at_or_below_process_temperature(393.15, 383.15)
    True

    References
    ----------
    METHODS.md §4.1.
    """
    if process_temperature_k is None or td24_k is None:
        return False
    return td24_k <= process_temperature_k


def severity(adiabatic_rise_k: float | None, scale: Scale = SEVERITY_3) -> str | None:
    """Severity level from the adiabatic temperature rise.

    Equation: level = the interval [lower, upper) of ``scale`` holding ΔT_ad
    (defaults: low < 50 K ≤ medium < 200 K ≤ high).

    Parameters
    ----------
    adiabatic_rise_k : float or None
        ΔT_ad of the runaway [K].
    scale : Scale
        A severity scale (``SEVERITY_3`` default, ``SEVERITY_4``, or a site scale).

    Returns
    -------
    str or None
        The level label, or ``None`` when ΔT_ad is unknown.

    Validity: "low" assumes no pressure effect (Stoessel 2008, from memory).

    Examples
    --------
    >>> severity(49.9), severity(50.0), severity(400.0, SEVERITY_4)
    ('low', 'medium', 'catastrophic')

    References
    ----------
    Stoessel 2008 ch. 3 severity table (from memory).
    """
    return None if adiabatic_rise_k is None else scale.classify(adiabatic_rise_k)


def probability(tmr_at_mtsr_s: float | None, scale: Scale = PROBABILITY_3) -> str | None:
    """Probability level from TMR_ad evaluated at MTSR.

    Equation: level = the interval [lower, upper) of ``scale`` holding TMR_ad
    (defaults: high < 8 h ≤ medium < 24 h ≤ low).

    Parameters
    ----------
    tmr_at_mtsr_s : float or None
        TMR_ad at MTSR [s].
    scale : Scale
        A probability scale (``PROBABILITY_3`` default, ``PROBABILITY_6``, or a site scale).

    Returns
    -------
    str or None
        The level label, or ``None`` when TMR_ad is unknown.

    Validity: 8 h is about one shift; 24 h the time to organise counter-measures.

    Examples
    --------
    >>> probability(8 * 3600.0), probability(24 * 3600.0), probability(0.5 * 3600, PROBABILITY_6)
    ('medium', 'low', 'frequent')

    References
    ----------
    Stoessel 2008 ch. 3 (from memory); probability levels after Gygax.
    """
    return None if tmr_at_mtsr_s is None else scale.classify(tmr_at_mtsr_s)


def risk_cell(
    severity_label: str | None, probability_label: str | None,
    severity_scale: Scale = SEVERITY_3, probability_scale: Scale = PROBABILITY_3,
    matrix: RiskMatrix = DEFAULT_RISK_MATRIX,
) -> str | None:
    """Risk-matrix cell for a severity and a probability level.

    Equation: cell = matrix[(severity, probability)], trying the scales' own
    labels first and their 3-level (coarse) labels second.

    Parameters
    ----------
    severity_label : str or None
        A label of ``severity_scale``.
    probability_label : str or None
        A label of ``probability_scale``.
    severity_scale : Scale
        The scale the severity label belongs to.
    probability_scale : Scale
        The scale the probability label belongs to.
    matrix : RiskMatrix
        Cell assignment; the default is an organisational choice, configure per site.

    Returns
    -------
    str or None
        The cell label, or ``None`` when a level is unknown or the matrix has no cell.

    Validity: as configured.

    Examples
    --------
    >>> risk_cell("critical", "probable", SEVERITY_4, PROBABILITY_6)
    'unacceptable'

    References
    ----------
    Stoessel 2008 ch. 3 (matrix form); assignment per site (METHODS.md §4.2).
    """
    if severity_label is None or probability_label is None:
        return None
    cell = matrix.cells.get((severity_label, probability_label))
    if cell is None:
        key = (severity_scale.coarse.get(severity_label), probability_scale.coarse.get(
            probability_label))
        cell = matrix.cells.get(key)  # type: ignore[arg-type]
    return cell
