"""Input errors and validation helpers.

Every check raises :class:`CalcInputError`, a ``ValueError`` that names the
argument, the offending value and the rule it broke, so a form or an API can
map it back to the field. The helpers return the validated value as a float
(or a float numpy array) so a caller can validate and convert in one line.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np


class CalcInputError(ValueError):
    """An input to a calculation breaks a physical or formal rule.

    Attributes ``argument``, ``value`` and ``rule`` hold the three parts of the
    message, e.g. ``process_temperature_k = -5.0: must be an absolute
    temperature above 0 K``.
    """

    def __init__(self, argument: str, value: object, rule: str) -> None:
        self.argument = argument
        self.value = value
        self.rule = rule
        super().__init__(f"{argument} = {_show(value)}: {rule}")


def _show(value: object) -> str:
    if isinstance(value, np.ndarray):
        return np.array2string(value, threshold=6, precision=6)
    return repr(value)


def _as_float(name: str, value: object) -> float:
    try:
        x = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise CalcInputError(name, value, "must be a real number") from None
    if not math.isfinite(x):
        raise CalcInputError(name, value, "must be a finite number")
    return x


def require_finite(name: str, value: object) -> float:
    """Return ``value`` as a float, or raise if it is not a finite real number.

    Parameters
    ----------
    name : str
        Argument name used in the error message.
    value : object
        Number to check.

    Returns
    -------
    float
        ``value`` as a float.

    Examples
    --------
    >>> require_finite("x", "2.5")
    2.5
    """
    return _as_float(name, value)


def require_positive(name: str, value: object) -> float:
    """Return ``value`` as a float, or raise unless it is finite and > 0.

    Parameters
    ----------
    name : str
        Argument name used in the error message.
    value : object
        Number to check.

    Returns
    -------
    float
        ``value`` as a float.

    Examples
    --------
    >>> require_positive("mass_kg", 2)
    2.0
    """
    x = _as_float(name, value)
    if x <= 0.0:
        raise CalcInputError(name, value, "must be greater than 0")
    return x


def require_non_negative(name: str, value: object) -> float:
    """Return ``value`` as a float, or raise unless it is finite and >= 0.

    Parameters
    ----------
    name : str
        Argument name used in the error message.
    value : object
        Number to check.

    Returns
    -------
    float
        ``value`` as a float.

    Examples
    --------
    >>> require_non_negative("gas_mol", 0)
    0.0
    """
    x = _as_float(name, value)
    if x < 0.0:
        raise CalcInputError(name, value, "must not be negative")
    return x


def require_absolute_temperature(name: str, value: object) -> float:
    """Return a temperature [K], or raise unless it is finite and above 0 K.

    Parameters
    ----------
    name : str
        Argument name used in the error message.
    value : object
        Temperature [K].

    Returns
    -------
    float
        The temperature [K].

    Examples
    --------
    >>> require_absolute_temperature("process_temperature_k", -5.0)
    Traceback (most recent call last):
    ...
    calcs.errors.CalcInputError: process_temperature_k = -5.0: must be an absolute temperature above 0 K
    """
    x = _as_float(name, value)
    if x <= 0.0:
        raise CalcInputError(name, value, "must be an absolute temperature above 0 K")
    return x


def require_fraction(name: str, value: object) -> float:
    """Return ``value`` as a float, or raise unless it lies in [0, 1].

    Parameters
    ----------
    name : str
        Argument name used in the error message.
    value : object
        Fraction [-].

    Returns
    -------
    float
        The fraction [-].

    Examples
    --------
    >>> require_fraction("max_accumulation", 0.25)
    0.25
    """
    x = _as_float(name, value)
    if not 0.0 <= x <= 1.0:
        raise CalcInputError(name, value, "must be a fraction between 0 and 1")
    return x


def require_finite_array(name: str, values: object) -> np.ndarray:
    """Return ``values`` as a 1-D float array, or raise on non-finite entries.

    Parameters
    ----------
    name : str
        Argument name used in the error message.
    values : object
        Sequence of numbers.

    Returns
    -------
    numpy.ndarray
        1-D float array.

    Examples
    --------
    >>> require_finite_array("q_w", [1, 2]).tolist()
    [1.0, 2.0]
    """
    try:
        arr = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise CalcInputError(name, values, "must be a sequence of real numbers") from None
    if arr.ndim != 1:
        raise CalcInputError(name, values, "must be one-dimensional")
    # one pass without a temporary: the sum is finite when every entry is (an overflowing
    # sum of finite entries falls through to the exact check)
    with np.errstate(over="ignore", invalid="ignore"):
        total = float(np.add.reduce(arr))
    if not math.isfinite(total) and not np.isfinite(arr).all():
        raise CalcInputError(name, arr, "must contain only finite numbers")
    return arr


def require_sorted_increasing(name: str, values: object, *, strict: bool = True) -> np.ndarray:
    """Return a finite 1-D float array, or raise unless it increases.

    Parameters
    ----------
    name : str
        Argument name used in the error message.
    values : object
        Sequence of numbers, e.g. time stamps [s].
    strict : bool
        Require strictly increasing values (default) or only non-decreasing.

    Returns
    -------
    numpy.ndarray
        1-D float array.

    Examples
    --------
    >>> require_sorted_increasing("time_s", [0, 60, 120]).tolist()
    [0.0, 60.0, 120.0]
    """
    arr = require_finite_array(name, values)
    d = np.diff(arr)
    bad = (d <= 0.0) if strict else (d < 0.0)
    if bad.any():
        i = int(np.argmax(bad))
        rule = "must be strictly increasing" if strict else "must not decrease"
        raise CalcInputError(name, arr, f"{rule} (entry {i + 1} follows {arr[i]!r})")
    return arr


def require_min_length(name: str, values: Sequence[object] | np.ndarray, minimum: int) -> None:
    """Raise unless ``values`` holds at least ``minimum`` entries.

    Parameters
    ----------
    name : str
        Argument name used in the error message.
    values : sequence
        The values to count.
    minimum : int
        Smallest allowed length.

    Returns
    -------
    None

    Examples
    --------
    >>> require_min_length("heating_rates_k_per_s", [1, 2, 3], 3)
    """
    if len(values) < minimum:
        raise CalcInputError(name, values, f"needs at least {minimum} values")


def require_same_length(names: Sequence[str], *arrays: Sequence[object] | np.ndarray) -> None:
    """Raise unless all ``arrays`` have the length of the first.

    Parameters
    ----------
    names : sequence of str
        Argument names, one per array.
    arrays : sequences
        The arrays to compare.

    Returns
    -------
    None

    Examples
    --------
    >>> require_same_length(("time_s", "q_w"), [0, 1], [5, 6])
    """
    n = len(arrays[0])
    for name, arr in zip(names[1:], arrays[1:], strict=True):
        if len(arr) != n:
            raise CalcInputError(
                name, f"<{len(arr)} values>", f"must have the same length as {names[0]} ({n})"
            )


def optional(check, name: str, value: object) -> float | None:
    """Apply ``check`` to ``value`` unless it is ``None``.

    Parameters
    ----------
    name : str
        Argument name used in the error message.
    check : callable
        One of the ``require_*`` helpers.
    value : object
        Value or ``None``.

    Returns
    -------
    float or None
        The checked value, or ``None``.

    Examples
    --------
    >>> optional(require_positive, "mass_kg", None) is None
    True
    """
    return None if value is None else check(name, value)
