"""Pseudo-first-order model of a dosing-controlled semi-batch reaction, and its what-if window.

The desired reaction consumes the dosed reagent B at a rate k·n_B (k pseudo-first order,
the charged reagent in excess). Fed at a constant rate over t_d, the accumulated
(unreacted) fraction of the stoichiometric feed and the heat-release rate are
(METHODS.md C1.7)::

    a(t) = (1 − e^{−k·t})/(k·t_d)              0 ≤ t ≤ t_d
    a(t) = a(t_d)·e^{−k·(t − t_d)}             t > t_d
    q(t) = Q_tot·k·a(t)

so k is read from the decay of q after the end of dosing, and the same k predicts the
accumulation and the peak heat release of any other dosing time; an activation energy
shifts k with the process temperature (Arrhenius). MTSR(t) = T_p + a(t)·Q_tot/(m(t)·c_p)
uses the mass present at t (METHODS.md §1.1 note), which puts the maximum before the end
of dosing. The operating window evaluates this, the cooling margin and the criticality
class on a grid of dosing times × process temperatures, vectorised.

Assumptions (shown with every fit): constant feed rate; isothermal reaction mass; k a
function of temperature only (same concentrations at lab and plant scale, no change of
mechanism, ideal mixing); the heat-release signal is free of calorimeter lag (lag makes
the decay look slower, k smaller and the predicted accumulation larger: conservative);
dosing stops at the cooling failure.

References: J. Steinbach, *Safety Assessment for Chemical Processes*, Wiley-VCH 1999 (the
semi-batch chapters) [MEMORY]; K.R. Westerterp, E.J. Molga, "Safety and runaway
prevention in batch and semibatch reactors—a review", Chem. Eng. Res. Des. 84 (2006)
543–552 [MEMORY for the details]; Stoessel 2008 ch. 7 [MEMORY]; METHODS.md §1, §2.2, §4.

The code lives in three modules, this one is the public import path: the model
(:mod:`calcs.semibatch_model`), its fits to series (:mod:`calcs.semibatch_fit`) and the
operating window (:mod:`calcs.semibatch_window`).
"""

from calcs.criticality import criticality_classes
from calcs.semibatch_fit import ArrheniusFit, SemibatchFit, fit_arrhenius, fit_semibatch_series
from calcs.semibatch_model import (
    ASSUMPTIONS,
    KTD_HIGH,
    KTD_LOW,
    REFERENCES,
    accumulated_fraction,
    accumulation_at_end_of_dosing,
    dosing_profile,
    mass_basis_accumulation,
    minimum_dosing_time,
    peak_specific_heat_release,
    rate_constant_at,
    rate_constant_from_accumulation,
)
from calcs.semibatch_window import OperatingWindow, as_table, operating_window

__all__ = ["ASSUMPTIONS", "KTD_HIGH", "KTD_LOW", "REFERENCES", "ArrheniusFit", "OperatingWindow",
           "SemibatchFit", "accumulated_fraction", "accumulation_at_end_of_dosing",
           "as_table", "criticality_classes", "dosing_profile", "fit_arrhenius",
           "fit_semibatch_series", "mass_basis_accumulation", "minimum_dosing_time",
           "operating_window", "peak_specific_heat_release", "rate_constant_at",
           "rate_constant_from_accumulation"]
