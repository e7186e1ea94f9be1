"""Inductance (and series resistance) at the ripple frequency.

docs/physics.md §5.2-5.3.  A measured table ``L(f)`` is interpolated piecewise linearly in
``(ln f, ln L)`` (a power law between points) and held at its end values outside the
table, with a flag.  Without a table, the catalogue value is derated by a
configurable factor: an estimate, common practice with no published source.
"""

from __future__ import annotations

import bisect
import math
from typing import NamedTuple

from specguard.physics._num import is_scalar, np

__all__ = [
    "DEFAULT_DERATING_FACTOR",
    "TableValue",
    "loglog_interpolate",
    "inductance_at_frequency",
    "series_resistance_at_frequency",
    "table_non_monotonic",
    "inductance_derated",
    "ESTIMATE_CURVES",
    "MEASURED_AT_BAND",
    "TABLE_EXTRAPOLATION_FLOOR",
    "inductance_estimated",
    "inductance_from_table",
    "inductance_estimate_range",
    "inductance_from_measured_ripple",
]

# "Roughly one third of the 1 kHz catalogue value at tens of kHz": practitioner
# folklore: common practice, no published source (docs/physics.md §5.3, §11).  Configurable.
DEFAULT_DERATING_FACTOR = 1.0 / 3.0


class TableValue(NamedTuple):
    """Interpolated value and whether the query lay outside the table."""

    value: object  # float or ndarray, in the unit of the table values
    extrapolated: object  # bool or ndarray of bool


def _table(frequencies, values):
    f = np.asarray(frequencies, dtype=float)
    v = np.asarray(values, dtype=float)
    if f.ndim != 1 or f.shape != v.shape or f.size == 0:
        raise ValueError("table needs equal-length 1-D frequency and value sequences")
    if np.any(f <= 0.0) or np.any(v <= 0.0):
        raise ValueError("log-log interpolation needs positive frequencies and values")
    order = np.argsort(f)
    f = f[order]
    v = v[order]
    if np.any(np.diff(f) == 0.0):
        raise ValueError("duplicate frequency in table")
    return f, v


def _table_floats(frequencies, values) -> tuple[list[float], list[float]]:
    """The same checks as :func:`_table`, on Python floats (no numpy import)."""
    pairs = sorted(zip((float(x) for x in frequencies), (float(y) for y in values), strict=True))
    if not pairs or len(pairs) != len(list(frequencies)) or len(list(frequencies)) != len(list(values)):
        raise ValueError("table needs equal-length 1-D frequency and value sequences")
    f = [p[0] for p in pairs]
    v = [p[1] for p in pairs]
    if min(f) <= 0.0 or min(v) <= 0.0:
        raise ValueError("log-log interpolation needs positive frequencies and values")
    if any(b == a for a, b in zip(f, f[1:], strict=False)):
        raise ValueError("duplicate frequency in table")
    return f, v


def _interpolate_scalar(query: float, f: list[float], v: list[float]) -> TableValue:
    # same rule as np.interp on (ln f, ln v): end values held outside the table
    if query <= f[0]:
        return TableValue(v[0], query < f[0])
    if query >= f[-1]:
        return TableValue(v[-1], query > f[-1])
    i = bisect.bisect_right(f, query) - 1
    slope = math.log(v[i + 1] / v[i]) / math.log(f[i + 1] / f[i])
    return TableValue(v[i] * (query / f[i]) ** slope, False)


def loglog_interpolate(frequency, table_frequencies, table_values) -> TableValue:
    """Power-law interpolation of a positive table, held at the ends.

    Parameters: frequency [Hz] query (float or array); table_frequencies [Hz];
    table_values [any positive unit].

    ``y(f) = y_i (f/f_i)^k_i``, ``k_i = ln(y_{i+1}/y_i) / ln(f_{i+1}/f_i)``; outside
    ``[f_1, f_n]`` the end value is held (a falling slope is never extrapolated towards
    zero) and ``extrapolated`` is True.  Source: derived here (docs/physics.md §5.2).
    """
    if is_scalar(frequency):
        # float path without numpy (a check of one spec stays numpy-free)
        f_list, v_list = _table_floats(table_frequencies, table_values)
        return _interpolate_scalar(float(frequency), f_list, v_list)
    f, v = _table(table_frequencies, table_values)
    scalar = False
    query = np.asarray(frequency, dtype=float)
    ln_f = np.log(f)
    ln_v = np.log(v)
    with np.errstate(divide="ignore", invalid="ignore"):
        ln_q = np.log(query)
    # np.interp holds the end values outside the table: exactly the rule above.
    value = np.exp(np.interp(ln_q, ln_f, ln_v))
    extrapolated = (query < f[0]) | (query > f[-1])
    if scalar:
        return TableValue(float(value), bool(extrapolated))
    return TableValue(value, extrapolated)


def inductance_at_frequency(frequency, table_frequencies, table_inductances) -> TableValue:
    """Effective inductance at a frequency from a measured ``L(f)`` table [H].

    Parameters: frequency [Hz] (use the ripple frequency ``f_r``, not the leg
    frequency); table_frequencies [Hz]; table_inductances [H] (series-model LCR
    readings).  Returns :class:`TableValue` (value [H], extrapolated flag).
    Source: derived here (docs/physics.md §5.2).
    """
    return loglog_interpolate(frequency, table_frequencies, table_inductances)


def series_resistance_at_frequency(frequency, table_frequencies, table_resistances) -> TableValue:
    """Series resistance ``R_s(f)`` from a measured table [Ohm] (same rule as L(f)).

    Source: derived here (docs/physics.md §5.2 and §5.5).
    """
    return loglog_interpolate(frequency, table_frequencies, table_resistances)


def table_non_monotonic(table_frequencies, table_inductances) -> bool:
    """True if the inductance rises anywhere with frequency [bool].

    Below self-resonance a measured ``L(f)`` is expected non-increasing; a rise
    suggests a measurement near resonance or a unit slip (warn).
    Source: derived here (docs/physics.md §5.2).
    """
    _, v = _table_floats(table_frequencies, table_inductances)
    return any(b > a for a, b in zip(v, v[1:], strict=False))


def table_largest_rise(table_frequencies, table_inductances) -> float:
    """Largest relative rise of the inductance from one row to the next, ``max(L_i+1/L_i - 1)``,
    or 0 when the table never rises [-].

    A rise of a few tenths of a percent is within the accuracy of an LCR meter and its
    fixture; the rule that judges this figure warns only above a band (docs/physics.md §5.2).
    Source: derived here (docs/physics.md §5.2).
    """
    _, v = _table_floats(table_frequencies, table_inductances)
    return max([0.0] + [b / a - 1.0 for a, b in zip(v, v[1:], strict=False)])


# The catalogue-to-PWM-frequency curve per winding construction (common practice, no
# published source; docs/physics.md §5.3): ``L(f) = L_cat max((f/f_cat)^-n, floor)``.
# Iron-core windings fall to about one third of a 1 kHz catalogue value by 20 kHz
# (n = ln 3 / ln 20 = 0.367); slotless and coreless windings, with less iron in the
# field, fall less. The policy can set each (``specguard config`` shows them).
ESTIMATE_CURVES: dict[str, tuple[float, float]] = {
    "iron-core": (0.367, 0.25),
    "slotless": (0.30, 0.30),
    "coreless": (0.25, 0.33),
}
# A catalogue value measured this close below the ripple frequency (ratio) is used as
# it is: the curve moves it by less than the spread of LCR readings (common practice).
MEASURED_AT_BAND = 0.8
# Beyond a measured table's last point its last falling segment continues, but not
# below this fraction of the last measured value (common practice, no published source).
TABLE_EXTRAPOLATION_FLOOR = 0.5


def inductance_estimated(catalogue_inductance, catalogue_frequency, frequency, exponent, floor):
    """ESTIMATE of the inductance at ``frequency`` from a catalogue value [H].

    Parameters: catalogue_inductance [H] measured at catalogue_frequency [Hz];
    frequency [Hz] (the ripple frequency); exponent [-] ``n``; floor [-] the lowest
    fraction of the catalogue value.
    ``L(f) = L_cat`` for ``f <= f_cat``, else ``L_cat max((f/f_cat)^-n, floor)``:
    continuous in ``f`` (no step at the catalogue frequency), falling as a power law
    (eddy currents in iron, magnets and windings) down to a floor.  Common practice,
    no published source (docs/physics.md §5.3): every result that uses it is an
    estimate and is labelled so.  Floats and arrays.
    """
    if is_scalar(frequency) and is_scalar(catalogue_frequency):
        ratio = float(frequency) / float(catalogue_frequency)
        if ratio <= 1.0:
            return float(catalogue_inductance)
        return float(catalogue_inductance) * max(ratio ** (-exponent), floor)
    ratio = np.asarray(frequency, dtype=float) / np.asarray(catalogue_frequency, dtype=float)
    factor = np.where(ratio <= 1.0, 1.0, np.maximum(np.maximum(ratio, 1.0) ** (-exponent), floor))
    return catalogue_inductance * factor


def inductance_from_table(frequency, table_frequencies, table_inductances) -> TableValue:
    """Inductance at ``frequency`` from a measured table, extrapolated by a stated law [H].

    Inside the table: :func:`inductance_at_frequency` (log-log).  Below the first
    point the first value is held.  Beyond the last point a falling last segment
    continues as its power law ``L_n (f/f_n)^k``, floored at
    :data:`TABLE_EXTRAPOLATION_FLOOR` of ``L_n``; a rising or flat one is held.
    ``extrapolated`` is True outside the table.  Source: derived here
    (docs/physics.md §5.2); the floor is common practice.
    """
    inside = inductance_at_frequency(frequency, table_frequencies, table_inductances)
    if not is_scalar(frequency):
        raise ValueError("inductance_from_table takes one frequency")
    f, v = _table_floats(table_frequencies, table_inductances)
    query = float(frequency)
    if query <= f[-1] or len(f) < 2:
        return inside
    slope = math.log(v[-1] / v[-2]) / math.log(f[-1] / f[-2])
    if slope >= 0.0:
        return inside
    value = max(v[-1] * (query / f[-1]) ** slope, TABLE_EXTRAPOLATION_FLOOR * v[-1])
    return TableValue(value, True)


def inductance_derated(catalogue_inductance, derating_factor=DEFAULT_DERATING_FACTOR):
    """ESTIMATE of the effective inductance at tens of kHz without ``L(f)`` data [H].

    Parameters: catalogue_inductance [H] (typically a ~1 kHz LCR reading);
    derating_factor [-] default 1/3.

    ``L_eff ~ k L_cat``.  Common practice, no published source (docs/physics.md §5.3,
    §11): label every result that uses it "estimated (no L(f) data)" and report
    the ripple as a range over :func:`inductance_estimate_range`.
    """
    return derating_factor * catalogue_inductance


def inductance_estimate_range(catalogue_inductance, derating_factor=DEFAULT_DERATING_FACTOR):
    """(low, high) inductance [H] = ``(k L_cat, L_cat)`` for a ripple range estimate.

    The ripple at the low end is the pessimistic estimate.  Common practice, no
    published source (docs/physics.md §5.3).
    """
    return inductance_derated(catalogue_inductance, derating_factor), 1.0 * catalogue_inductance


def inductance_from_measured_ripple(high_voltage, average_voltage, duty, period, ripple_peak_to_peak):
    """Effective loop inductance from a measured ripple [H].

    Parameters: high_voltage [V] ``V1``; average_voltage [V] load average;
    duty [-]; period [s] ripple period; ripple_peak_to_peak [A] measured.
    ``L_eff = (V1 - V_avg) D T_r / dI`` (linear regime).  Source: derived here
    (docs/physics.md §5.2).
    """
    return (high_voltage - average_voltage) * duty * period / ripple_peak_to_peak
