"""MTT, the maximum temperature for technical reasons: the method table (METHODS.md §5).

In the style of the ``fluids`` library: :func:`mtt_methods` lists the methods the given
inputs allow, best first, and :func:`mtt` computes MTT by one of them (the first when
``method`` is None). The scenario (:mod:`calcs._scenario_vessel`) takes the first method of
the table and says why a missing input leaves MTT unknown.

==============================  ===========================================================
method                          inputs and model
==============================  ===========================================================
``mtt.override``                an MTT typed by the reviewer (any system)
``mtt.boiling_point``           open vessel with vapour-pressure data: the boiling point at
                                the operating pressure (Antoine, :mod:`calcs.vapour`)
``mtt.closed_vessel_relief``    closed vessel with a relief set pressure and vapour-pressure
                                data (or a declared non-volatile mass): where the pressure
                                of vapour, pad gas and released gas reaches the set pressure
                                (:func:`calcs.pressure.closed_vessel_mtt`)
``mtt.closed_vessel_design``    the same at the design pressure when no relief set pressure
                                is given
==============================  ===========================================================

The scenario names the boiling point's data source in the method it records
(``mtt.boiling_point.antoine`` or ``mtt.boiling_point.chemicals``).
"""

from __future__ import annotations

from collections.abc import Callable

from calcs.pressure import closed_vessel_mtt
from calcs.vapour import AntoineInputs, antoine_boiling_point, antoine_vapour_pressure

OVERRIDE = "mtt.override"
BOILING_POINT = "mtt.boiling_point"
CLOSED_VESSEL_RELIEF = "mtt.closed_vessel_relief"
CLOSED_VESSEL_DESIGN = "mtt.closed_vessel_design"

#: every method, in the order of preference
MTT_METHODS = (OVERRIDE, BOILING_POINT, CLOSED_VESSEL_RELIEF, CLOSED_VESSEL_DESIGN)


def mtt_methods(
    *, system: str, override_k: float | None = None, vapour_data: bool = False,
    non_volatile: bool = False, relief_set_pressure_pa: float | None = None,
    design_pressure_pa: float | None = None,
) -> list[str]:
    """The MTT methods these inputs allow, best first (empty: MTT unknown).

    Parameters
    ----------
    system : str
        ``"open"`` or ``"closed"``.
    override_k : float or None
        MTT typed by the reviewer [K].
    vapour_data : bool
        Vapour-pressure data of the solvent are at hand (Antoine constants).
    non_volatile : bool
        The reaction mass is declared non-volatile (closed vessel: pad and released gas only).
    relief_set_pressure_pa, design_pressure_pa : float or None
        Relief set pressure and design pressure of the closed vessel [Pa absolute].

    Returns
    -------
    list of str
        Method names of :data:`MTT_METHODS`, best first.

    Examples
    --------
    >>> mtt_methods(system="open", vapour_data=True)
    ['mtt.boiling_point']
    >>> mtt_methods(system="closed", vapour_data=True, relief_set_pressure_pa=4e5,
    ...             design_pressure_pa=6e5)
    ['mtt.closed_vessel_relief']
    >>> mtt_methods(system="closed", non_volatile=True, design_pressure_pa=6e5,
    ...             override_k=400.0)
    ['mtt.override', 'mtt.closed_vessel_design']
    >>> mtt_methods(system="closed", relief_set_pressure_pa=4e5)  # no vapour data: unknown
    []
    """
    methods = [OVERRIDE] if override_k is not None else []
    if system == "open":
        if vapour_data:
            methods.append(BOILING_POINT)
    elif vapour_data or non_volatile:
        if relief_set_pressure_pa is not None:
            methods.append(CLOSED_VESSEL_RELIEF)
        elif design_pressure_pa is not None:
            methods.append(CLOSED_VESSEL_DESIGN)
    return methods


def mtt(
    *, method: str | None = None, system: str = "open", override_k: float | None = None,
    antoine: AntoineInputs | None = None, operating_pressure_pa: float | None = None,
    non_volatile: bool = False, relief_set_pressure_pa: float | None = None,
    design_pressure_pa: float | None = None,
    vapour_pressure: Callable[[float], float] | None = None, pad_pressure_pa: float = 0.0,
    process_temperature_k: float | None = None, gas_amount_mol: float = 0.0,
    headspace_m3: float | None = None,
) -> float | None:
    """MTT [K] by `method` (None: the first of :func:`mtt_methods`); None where no method
    applies or the closed vessel stays below its set pressure up to 1500 K.

    Parameters
    ----------
    method : str or None
        One of :data:`MTT_METHODS`; None: the first the inputs allow.
    system : str
        ``"open"`` or ``"closed"``.
    override_k : float or None
        MTT typed by the reviewer [K].
    antoine : AntoineInputs or None
        The solvent's Antoine set (boiling point; closed-vessel vapour pressure when
        `vapour_pressure` is not given).
    operating_pressure_pa : float or None
        Absolute operating pressure of the open vessel [Pa].
    non_volatile : bool
        The reaction mass is declared non-volatile.
    relief_set_pressure_pa, design_pressure_pa : float or None
        Closed vessel's relief set pressure and design pressure [Pa absolute].
    vapour_pressure : callable or None
        P_vap(T) [Pa] of the closed vessel's mass (zero for a non-volatile one).
    pad_pressure_pa : float
        Pad-gas pressure at the process temperature [Pa].
    process_temperature_k : float or None
        T_p, where the pad gas is measured [K].
    gas_amount_mol : float
        Gas released by the reaction [mol].
    headspace_m3 : float or None
        Free volume of the closed vessel [m³] (needed with released gas).

    Returns
    -------
    float or None
        MTT [K].

    Examples
    --------
    Water boils at 373.1 K at 101 325 Pa by the Antoine set for 344-373 K of Bridgeman &
    Aldrich 1964 as the NIST WebBook tabulates it (coefficients from memory):

    >>> water = AntoineInputs(5.08354, 1663.125, -45.622, "10", "bar", "K", 344.0, 373.0)
    >>> round(mtt(system="open", antoine=water, operating_pressure_pa=101325.0), 1)
    373.1
    >>> mtt(system="open", override_k=380.0, antoine=water, operating_pressure_pa=101325.0)
    380.0
    >>> mtt(system="closed", relief_set_pressure_pa=4e5) is None
    True
    """
    if method is None:
        allowed = mtt_methods(system=system, override_k=override_k,
                              vapour_data=antoine is not None or vapour_pressure is not None,
                              non_volatile=non_volatile,
                              relief_set_pressure_pa=relief_set_pressure_pa,
                              design_pressure_pa=design_pressure_pa)
        if not allowed:
            return None
        method = allowed[0]
    if method == OVERRIDE:
        return override_k
    if method == BOILING_POINT:
        return antoine_boiling_point(operating_pressure_pa, antoine)
    if method in (CLOSED_VESSEL_RELIEF, CLOSED_VESSEL_DESIGN):
        p_set = relief_set_pressure_pa if method == CLOSED_VESSEL_RELIEF else design_pressure_pa
        if vapour_pressure is None and antoine is not None:
            def vapour_pressure(t: float) -> float:
                return antoine_vapour_pressure(t, antoine)
        elif vapour_pressure is None:
            if not non_volatile:
                return None  # pad gas alone would understate the pressure: unknown, not low
            def vapour_pressure(t: float) -> float:
                return 0.0
        return closed_vessel_mtt(p_set, vapour_pressure, pad_pressure_pa, process_temperature_k,
                                 gas_amount_mol, headspace_m3)
    raise ValueError(f"unknown MTT method {method!r}; known: {', '.join(MTT_METHODS)}")
