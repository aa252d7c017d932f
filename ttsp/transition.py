"""Glass transition temperature from a frequency campaign: the E'' peak and the tan δ peak.

At a fixed test frequency f, the loss modulus E''(T) and the loss factor tan δ(T) pass through a
maximum in the glass-transition region. The temperature of that maximum is a common assignment
of Tg: the loss-modulus peak is the assignment of IEC 61006, and the tan δ peak is the one most
often reported; both are alternatives named in ASTM E1640 (which itself uses the onset of the
E' drop). For the same frequency the tan δ peak lies above the E'' peak, usually by several
kelvin, and both rise with frequency (Ferry, *Viscoelastic Properties of Polymers*, 3rd ed.,
Wiley 1980, ch. 11; Menard, *Dynamic Mechanical Analysis: A Practical Introduction*,
2nd ed., CRC Press 2008).

Two estimates are made and both are reported, so that they can be compared:

(a) **from the model.** For a thermorheologically simple material the isochrone at frequency f is

    .. math:: E''(T) = b_T\\, E''_\\mathrm{ref}(2\\pi f\\, a_T(T)), \\qquad
              \\tan\\delta(T) = \\tan\\delta_\\mathrm{ref}(2\\pi f\\, a_T(T)),

    with the Prony series at the reference temperature, the fitted shift law and the build's
    vertical shift b_T (1 without one; :class:`ttsp.model.ViscoelasticModel`). It is evaluated
    on a grid of temperatures no coarser than 0.1 K over the law's valid range, and the maximum
    of log10 E''(T) (or log10 tan δ) is refined by the vertex of the parabola through the
    largest grid value and its two neighbours.

(b) **from the raw isotherms.** Each isotherm whose measured frequency range contains
    ω = 2πf is interpolated at ω, linearly in log10 value against log10 ω. Across the isotherms
    (in temperature order) the largest value counts as a peak only when it is bracketed, that is,
    when the isotherms on both sides of it give strictly lower values; the vertex of the parabola
    through those three points (T, log10 value) is the estimate.

A maximum at an end of the searched range is not a peak: the estimate is then None and a note
says why. The parabola through three samples h apart of a function with a maximum at T_p
places its vertex within about |y'''| h² / (6 |y''|) of T_p (the leading error when y is
expanded to third order about T_p), which is why (a) is accurate to well below 0.01 K and (b),
with isotherms a few kelvin apart, to a fraction of a kelvin to about a kelvin.

This module imports numpy only (pandas lazily, inside ``to_frame``).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from numpy.typing import ArrayLike

if TYPE_CHECKING:
    from .data import Campaign

import html
import math
import warnings
from dataclasses import dataclass
from typing import Any

import numpy as np

from ._validation import bad_value, check_positive
from .exceptions import DataError, ExtrapolationWarning
from .units import ZERO_CELSIUS_K

__all__ = ["GlassTransitionEstimate", "estimate_glass_transition", "storage_onset"]

#: Coarsest temperature step (K) of the grid on which the model isochrone is searched.
_GRID_STEP_K = 0.1
_GRID_MIN_POINTS = 201
_GRID_MAX_POINTS = 20001
#: Relative tolerance on the ends of an isotherm's frequency range (values read in Hz and
#: converted to rad/s may differ from 2*pi*f by rounding).
_RANGE_RTOL = 1e-9

_QUANTITIES = (
    # (model quantity, campaign column, label used in notes, field stem)
    ("loss_modulus", "loss_modulus_Pa", "loss modulus", "loss_peak"),
    ("tan_delta", "tan_delta", "tan δ", "tan_delta_peak"),
)


def _celsius(value_K: float | None) -> float | None:
    return None if value_K is None else float(value_K) - ZERO_CELSIUS_K


def _fmt_T(value_K: float) -> str:
    return f"{value_K:.2f} K ({value_K - ZERO_CELSIUS_K:.2f} °C)"


@dataclass(frozen=True)
class GlassTransitionEstimate:
    """Peak temperatures of E'' and tan δ at one frequency, from the model and from the isotherms.

    Attributes
    ----------
    frequency_Hz : float
        The test frequency f (Hz) of the isochrone.
    loss_peak_from_model_K : float or None
        Temperature (K) of the maximum of E''(T) at f predicted by the Prony series and shift
        law; None when the maximum lies at an end of the searched temperature range.
    tan_delta_peak_from_model_K : float or None
        Same for tan δ(T) (K).
    loss_peak_from_isotherms_K : float or None
        Temperature (K) of the E'' peak read from the raw isotherms interpolated at f; None
        when the isotherms do not bracket the peak.
    tan_delta_peak_from_isotherms_K : float or None
        Same for tan δ (K).
    notes : tuple of str
        Why an estimate is missing, which isotherms were not used, extrapolations.
    temperature_range_K : (float, float) or None
        The temperature range (K) over which the model isochrone was searched.
    storage_onset_from_model_K : float or None
        Onset of the drop of E'(T) at f (K): where the tangent to log10 E' at the cold end of
        the searched range meets the tangent at its steepest descent (:func:`storage_onset`);
        None when the cold end does not reach the glassy plateau or E' does not fall.
    """

    frequency_Hz: float
    loss_peak_from_model_K: float | None
    tan_delta_peak_from_model_K: float | None
    loss_peak_from_isotherms_K: float | None
    tan_delta_peak_from_isotherms_K: float | None
    notes: tuple = ()
    temperature_range_K: tuple | None = None
    storage_onset_from_model_K: float | None = None

    _FIELDS = ("loss_peak_from_model", "tan_delta_peak_from_model",
               "loss_peak_from_isotherms", "tan_delta_peak_from_isotherms")

    def to_dict(self) -> dict:
        """JSON-ready dict: every peak temperature in K and in °C (None when missing), notes."""
        out: dict[str, Any] = {"frequency_Hz": float(self.frequency_Hz)}
        for stem in self._FIELDS:
            value = getattr(self, stem + "_K")
            out[stem + "_K"] = None if value is None else float(value)
            out[stem + "_C"] = _celsius(value)
        rng = self.temperature_range_K
        out["temperature_range_K"] = None if rng is None else [float(rng[0]), float(rng[1])]
        out["temperature_range_C"] = (None if rng is None
                                      else [_celsius(rng[0]), _celsius(rng[1])])
        out["storage_onset_from_model_K"] = (None if self.storage_onset_from_model_K is None
                                             else float(self.storage_onset_from_model_K))
        out["storage_onset_from_model_C"] = _celsius(self.storage_onset_from_model_K)
        out["notes"] = [str(n) for n in self.notes]
        return out

    def to_frame(self):
        """Tidy table: one row per (assignment, source) with ``temperature_K`` and
        ``temperature_C`` (NaN when missing) and ``frequency_Hz``."""
        import pandas as pd

        rows = []
        for stem in self._FIELDS:
            assignment, source = stem.split("_from_")
            value = getattr(self, stem + "_K")
            rows.append({"assignment": assignment, "source": source,
                         "frequency_Hz": float(self.frequency_Hz),
                         "temperature_K": math.nan if value is None else float(value),
                         "temperature_C": math.nan if value is None else _celsius(value)})
        return pd.DataFrame(rows)

    def _repr_html_(self) -> str:
        def cell(value):
            return "&ndash;" if value is None else f"{value:.2f} K ({_celsius(value):.2f} °C)"

        head = ("<tr><th></th><th style='text-align:left'>from the model</th>"
                "<th style='text-align:left'>from the isotherms</th></tr>")
        body = (
            f"<tr><th style='text-align:left'>E'' peak</th>"
            f"<td>{cell(self.loss_peak_from_model_K)}</td>"
            f"<td>{cell(self.loss_peak_from_isotherms_K)}</td></tr>"
            f"<tr><th style='text-align:left'>tan δ peak</th>"
            f"<td>{cell(self.tan_delta_peak_from_model_K)}</td>"
            f"<td>{cell(self.tan_delta_peak_from_isotherms_K)}</td></tr>"
        )
        notes = "".join(f"<li>{html.escape(n)}</li>" for n in self.notes)
        return (f"<table><caption>Glass transition at {self.frequency_Hz:g} Hz</caption>"
                f"{head}{body}</table>" + (f"<ul>{notes}</ul>" if notes else ""))


# ----------------------------------------------------------------------------------------
# helpers
# ----------------------------------------------------------------------------------------
#: the cold end counts as glassy when log10 E' falls there at most this fraction as fast as
#: at its steepest (a plateau is flat; a choice of this module, no standard gives a number)
GLASSY_SLOPE_FRACTION = 0.2


def storage_onset(temperature_K: ArrayLike,
                  storage_modulus_Pa: ArrayLike) -> tuple[float | None, str | None]:
    """Onset of the E' drop on an isochrone: the temperature where the tangent to log10 E'(T)
    at the cold end meets the tangent at the steepest descent (the tangent-intersection
    construction of ASTM E1640, on log10 E').

    With y = log10 E', the baseline y_0 + s_0 (T − T_0) at the coldest point and the tangent
    y_i + s_i (T − T_i) at the steepest point (slopes by central differences) meet at
    T_on = T_i + (y_0 − y_i + s_0 (T_i − T_0)) / (s_i − s_0)  (the two lines set equal).

    Parameters
    ----------
    temperature_K : array of float
        Ascending temperatures (K), evenly spaced.
    storage_modulus_Pa : array of float
        E' (Pa) at those temperatures and one frequency.

    Returns
    -------
    (float or None, str or None)
        The onset (K), or None with the reason.
    """
    T = np.asarray(temperature_K, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        y = np.log10(np.asarray(storage_modulus_Pa, dtype=float))
    if T.size < 5 or not np.all(np.isfinite(y)):
        return None, "E' is not positive and finite over the range"
    slope = np.gradient(y, T)
    i = int(np.argmin(slope))
    if slope[i] >= 0 or i in (0, T.size - 1):
        return None, "E' does not fall inside the range"
    if abs(slope[0]) > GLASSY_SLOPE_FRACTION * abs(slope[i]):
        return None, ("the cold end of the range is not on the glassy plateau (E' falls there "
                      f"{abs(slope[0]) / abs(slope[i]):.0%} as fast as at its steepest)")
    onset = T[i] + (y[0] - y[i] + slope[0] * (T[i] - T[0])) / (slope[i] - slope[0])
    return float(onset), None


def _model_onset(model, frequency_Hz, T_lo, T_hi, notes) -> float | None:
    n = int(min(_GRID_MAX_POINTS, max(_GRID_MIN_POINTS,
                                      math.ceil((T_hi - T_lo) / _GRID_STEP_K) + 1)))
    T = np.linspace(T_lo, T_hi, n)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExtrapolationWarning)
        values = np.asarray(model.isochrone("storage_modulus", T, frequency_Hz), dtype=float)
    onset, why = storage_onset(T, values)
    if onset is None:
        notes.append(f"model E' onset: none at {frequency_Hz:g} Hz: {why}")
    return onset


def _parabola_vertex(x: np.ndarray, y: np.ndarray) -> float | None:
    """Abscissa of the vertex of the parabola through three points (x need not be evenly
    spaced); None when the points are not distinct or do not curve downward."""
    x0, x1, x2 = (float(v) for v in x)
    y0, y1, y2 = (float(v) for v in y)
    if not (x0 < x1 < x2):
        return None
    # divided differences: y = y1 + b (x - x1) + c (x - x1)^2 ... written through x0, x1, x2
    d01 = (y1 - y0) / (x1 - x0)
    d12 = (y2 - y1) / (x2 - x1)
    c = (d12 - d01) / (x2 - x0)  # leading coefficient of the parabola
    if not (np.isfinite(c) and c < 0):
        return None
    # slope of the parabola at x1 is b = d01 + c (x1 - x0); the vertex is x1 - b / (2c)
    b = d01 + c * (x1 - x0)
    return x1 - b / (2.0 * c)


def _check_range(value: Any) -> tuple[float, float]:
    try:
        lo, hi = (float(v) for v in value)
    except (TypeError, ValueError):
        raise bad_value("temperature_range_K", "None or a pair (low, high) in kelvin",
                        value) from None
    if not (np.isfinite(lo) and np.isfinite(hi) and 0 < lo < hi):
        raise bad_value("temperature_range_K", "a pair (low, high) with 0 < low < high, in kelvin",
                        value)
    return lo, hi


def _search_range(model, campaign, temperature_range_K) -> tuple[tuple[float, float], str]:
    if temperature_range_K is not None:
        return _check_range(temperature_range_K), "the requested range"
    rng = getattr(model.law, "valid_temperature_range_K", None)
    if rng is not None and float(rng[1]) > float(rng[0]):
        return (float(rng[0]), float(rng[1])), "the valid range of the shift law"
    if campaign is not None and len(campaign) >= 2:
        temps = campaign.temperatures_K
        return (float(temps.min()), float(temps.max())), "the temperature range of the campaign"
    raise bad_value("temperature_range_K",
                    "given (a pair low, high in K) when the shift law has no valid temperature "
                    "range and no campaign is given", temperature_range_K)


def _model_peak(model, quantity: str, label: str, frequency_Hz: float,
                T_lo: float, T_hi: float, range_words: str, notes: list) -> float | None:
    n = int(min(_GRID_MAX_POINTS, max(_GRID_MIN_POINTS,
                                      math.ceil((T_hi - T_lo) / _GRID_STEP_K) + 1)))
    T = np.linspace(T_lo, T_hi, n)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", ExtrapolationWarning)
        values = np.asarray(model.isochrone(quantity, T, frequency_Hz), dtype=float)
    extrapolated_grid = any(issubclass(w.category, ExtrapolationWarning) for w in caught)
    with np.errstate(divide="ignore", invalid="ignore"):
        y = np.where(np.isfinite(values) & (values > 0), np.log10(values), -np.inf)
    if not np.any(np.isfinite(y)):
        notes.append(f"model {label}: the isochrone at {frequency_Hz:g} Hz has no positive "
                     f"finite value between {_fmt_T(T_lo)} and {_fmt_T(T_hi)}")
        return None
    i = int(np.argmax(y))
    if i == 0 or i == n - 1:
        end = "lower" if i == 0 else "upper"
        notes.append(f"model {label}: no peak inside {range_words} ({_fmt_T(T_lo)} to "
                     f"{_fmt_T(T_hi)}); the isochrone at {frequency_Hz:g} Hz is largest at its "
                     f"{end} end")
        return None
    peak = _parabola_vertex(T[i - 1:i + 2], y[i - 1:i + 2])
    if peak is None:  # a flat top on the grid: keep the grid maximum
        peak = float(T[i])
    if extrapolated_grid:
        # is the value at the peak itself an extrapolation (of the law or of the series)?
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", ExtrapolationWarning)
            model.isochrone(quantity, np.array([peak]), frequency_Hz)
        messages = [str(w.message) for w in caught
                    if issubclass(w.category, ExtrapolationWarning)]
        if messages:
            note = (f"model {label}: the peak at {_fmt_T(peak)} lies where the model "
                    f"extrapolates ({messages[0]})")
            notes.append(note)
            warnings.warn(note, ExtrapolationWarning, stacklevel=3)
    return float(peak)


def _isotherm_peak(campaign, column: str, label: str, frequency_Hz: float,
                   notes: list) -> float | None:
    omega = 2.0 * math.pi * frequency_Hz
    temps, logs, missing, outside = [], [], 0, 0
    for iso in campaign.isotherms:
        if column not in iso.values:
            missing += 1
            continue
        x = np.asarray(iso.x, dtype=float)
        v = np.asarray(iso.values[column], dtype=float)
        ok = np.isfinite(x) & (x > 0) & np.isfinite(v) & (v > 0)
        x, v = x[ok], v[ok]
        if x.size == 0 or not (x[0] * (1 - _RANGE_RTOL) <= omega <= x[-1] * (1 + _RANGE_RTOL)):
            outside += 1
            continue
        lx = np.log10(x)
        logs.append(float(np.interp(math.log10(omega), lx, np.log10(v))))
        temps.append(float(iso.temperature_K))
    total = len(campaign)
    if missing == total:
        notes.append(f"isotherms {label}: the campaign has no {label} (nor the functions it "
                     f"follows from)")
        return None
    if missing or outside:
        parts = []
        if missing:
            parts.append(f"{missing} have no {label}")
        if outside:
            parts.append(f"{outside} do not cover {frequency_Hz:g} Hz ({omega:.4g} rad/s)")
        notes.append(f"isotherms {label}: {len(temps)} of {total} isotherms used; "
                     + " and ".join(parts))
    if len(temps) < 3:
        notes.append(f"isotherms {label}: a peak needs at least 3 isotherms at "
                     f"{frequency_Hz:g} Hz; {len(temps)} available")
        return None
    T = np.asarray(temps)
    y = np.asarray(logs)
    i = int(np.argmax(y))
    if i == 0 or i == T.size - 1:
        end = "lowest" if i == 0 else "highest"
        notes.append(f"isotherms {label}: the isotherms do not bracket the peak at "
                     f"{frequency_Hz:g} Hz; the largest value is at the {end} usable "
                     f"temperature {_fmt_T(T[i])}")
        return None
    if not (y[i - 1] < y[i] and y[i + 1] < y[i]):
        notes.append(f"isotherms {label}: the largest value at {_fmt_T(T[i])} is not above both "
                     f"neighbouring isotherms (a flat top); no bracketed peak")
        return None
    peak = _parabola_vertex(T[i - 1:i + 2], y[i - 1:i + 2])
    if peak is None:
        notes.append(f"isotherms {label}: the isotherms around {_fmt_T(T[i])} share a "
                     f"temperature; no parabola can be drawn")
        return None
    return float(peak)


# ----------------------------------------------------------------------------------------
# the public function
# ----------------------------------------------------------------------------------------
def estimate_glass_transition(model, campaign: Campaign | None = None, *, frequency_Hz: float = 1.0,
                              temperature_range_K: tuple[float, float] | None = None
                              ) -> GlassTransitionEstimate:
    """Tg at a frequency as the temperature of the E'' peak and of the tan δ peak.

    (a) From the model: the isochrones E''(T) = b_T E''_ref(2πf a_T) and tan δ(T) =
    tan δ_ref(2πf a_T) (Ferry 1980, ch. 11) are evaluated on a grid of at most 0.1 K steps over
    the search range and their maxima (in log10 value) refined by a three-point parabola.
    (b) From the isotherms: every isotherm whose frequency range contains 2πf is interpolated
    there (log10 value linear in log10 ω); the largest value across temperatures is a peak only
    when both neighbouring isotherms are lower, and the parabola through the three points
    refines it. Loss-modulus peak: IEC 61006; tan δ peak and E'' peak as alternatives in
    ASTM E1640. For the same frequency the tan δ peak lies above the E'' peak.

    Parameters
    ----------
    model : ttsp.model.ViscoelasticModel
        Prony series at the reference temperature with its shift law.
    campaign : ttsp.data.Campaign, optional
        The frequency-domain campaign the model was built from. Missing E'' or tan δ are
        derived where possible (:meth:`~ttsp.data.Campaign.with_derived`). Without it the
        isotherm estimates are None.
    frequency_Hz : float
        Test frequency f in Hz (> 0), 1 Hz by default.
    temperature_range_K : (float, float), optional
        Temperatures (K) over which the model isochrone is searched. Default: the shift law's
        ``valid_temperature_range_K``, else the campaign's temperature range.

    Returns
    -------
    GlassTransitionEstimate

    Raises
    ------
    DataError
        ``frequency_Hz`` is not positive and finite; ``campaign`` is not a frequency-domain
        campaign; ``model`` cannot evaluate isochrones; ``temperature_range_K`` is not a pair
        0 < low < high, or is needed (no valid range on the law, no campaign) and missing.

    Warns
    -----
    ExtrapolationWarning
        A model peak lies where the law or the Prony series extrapolates (outside the law's
        valid temperature range or the series' reduced-time range). Warnings for the rest of
        the search grid are not passed on.
    """
    f = check_positive("frequency_Hz", frequency_Hz)
    if not (callable(getattr(model, "isochrone", None)) and hasattr(model, "law")):
        raise bad_value("model", "a ViscoelasticModel (Prony series with a shift law)",
                        type(model).__name__)
    if campaign is not None:
        domain = getattr(campaign, "domain", None)
        if domain is None or not hasattr(campaign, "isotherms"):
            raise bad_value("campaign", "None or a ttsp.data.Campaign", type(campaign).__name__)
        if domain != "frequency":
            raise DataError(f"campaign must be frequency-domain data (E'', tan δ against "
                            f"frequency) to give a loss peak; got a {domain!r}-domain campaign")
    (T_lo, T_hi), range_words = _search_range(model, campaign, temperature_range_K)

    notes: list[str] = []
    found: dict[str, float | None] = {}
    for quantity, _column, label, stem in _QUANTITIES:
        found[stem + "_from_model_K"] = _model_peak(model, quantity, label, f, T_lo, T_hi,
                                                    range_words, notes)
    if campaign is None:
        notes.append("no campaign given: no estimate from the isotherms")
        for _q, _c, _l, stem in _QUANTITIES:
            found[stem + "_from_isotherms_K"] = None
    else:
        derived = campaign.with_derived()
        for _quantity, column, label, stem in _QUANTITIES:
            found[stem + "_from_isotherms_K"] = _isotherm_peak(derived, column, label, f, notes)

    onset = _model_onset(model, f, T_lo, T_hi, notes)
    return GlassTransitionEstimate(frequency_Hz=f, notes=tuple(notes),
                                   temperature_range_K=(T_lo, T_hi),
                                   storage_onset_from_model_K=onset, **found)
