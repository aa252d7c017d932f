"""The campaign model: isotherms of measured material functions, immutable, SI and kelvin inside.

An :class:`Isotherm` is one temperature's measurement: the independent variable (angular frequency
in rad/s or time in s, ascending) and the material functions that were measured at it. A
:class:`Campaign` holds its isotherms in temperature order with the metadata needed to read the
numbers back: domain, modulus kind (tensile E/D or shear G/J), where the data came from and the
units as they were read. Both are frozen; their arrays are read-only.

Tidy frames use the column names of :data:`QUANTITIES` plus ``temperature_K``, ``x`` named
``frequency_rad_s`` or ``time_s``, ``isotherm`` (0-based, in temperature order) and ``source_row``
(the line of the input file a point came from, 1-based, or -1 when unknown).

The material functions and the column names are those of :mod:`ttsp.quantities` (re-exported
here); :meth:`Campaign.from_frame` checks a frame's values through :mod:`ttsp._frame_checks`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from html import escape
from itertools import pairwise
from types import MappingProxyType

import numpy as np
from numpy.typing import ArrayLike

from ._arrays import readonly as _readonly
from ._frame_checks import (
    FrameRows,
    checked_measured_values,
    checked_temperature_and_x,
    columns_found,
    measured_quantities,
    needed_quantities,
)
from ._repeats import REPEAT_POLICIES, merge_repeats
from ._validation import bad_value, check_positive, where
from .exceptions import DataError
from .quantities import (  # noqa: F401  (re-exported)
    DOMAINS,
    MAX_MAGNITUDE,
    MAX_TEMPERATURE_K,
    MODULUS_KINDS,
    QUANTITIES,
    X_COLUMN,
    Quantity,
)
from .units import kelvin_to_celsius

__all__ = ["Quantity", "QUANTITIES", "Isotherm", "Campaign", "DOMAINS", "MODULUS_KINDS",
           "X_COLUMN", "REPEATS_MERGED"]

#: a reference temperature this close (K) to an isotherm's temperature is that isotherm's
REFERENCE_SNAP_K = 0.05
#: the ``dropped_rows`` entry counting rows merged into a repeated time stamp's point
REPEATS_MERGED = "repeated time stamps merged (mean in log)"


def _same_array(a, b) -> bool:
    return a.shape == b.shape and bool(np.array_equal(a, b, equal_nan=True))


@dataclass(frozen=True, eq=False)
class Isotherm:
    """One temperature's measurement.

    Parameters
    ----------
    temperature_K : float
        Mean temperature of the points grouped into this isotherm, in K (finite, > 0).
    x : array
        Angular frequency in rad/s or time in s, strictly ascending after construction (the
        points are sorted by x; a repeated x is an error).
    values : mapping of str to array
        Measured functions by the names of :data:`QUANTITIES`, in SI units, one value per x.
    source_rows : array of int, optional
        The input-file line each point came from (1-based), for messages and traceability.

    Two isotherms are equal when their temperatures, x, values and source rows are equal
    (NaN equals NaN). Arrays are read-only copies; the inputs are never modified.

    Raises
    ------
    DataError
        If the temperature is not a positive finite number, x is not one-dimensional, a value
        array has another length than x, a quantity name is unknown, or an x value repeats.
    """

    temperature_K: float
    x: np.ndarray
    values: Mapping[str, np.ndarray]
    # None is taken and replaced by -1 per point in __post_init__: readers always get an array
    source_rows: np.ndarray = field(default=None)  # type: ignore[arg-type]

    def __post_init__(self):
        try:
            t = float(self.temperature_K)
        except (TypeError, ValueError):
            raise bad_value("temperature_K", "a number in kelvin", self.temperature_K) from None
        if not (np.isfinite(t) and t > 0):
            raise bad_value("temperature_K", "finite and above absolute zero (in K)",
                            self.temperature_K)
        x = np.asarray(self.x, dtype=float)
        if x.ndim != 1:
            raise bad_value("x", "a one-dimensional array", f"an array of shape {x.shape}")
        rows = (np.full(x.shape, -1, dtype=np.int64) if self.source_rows is None
                else np.asarray(self.source_rows, dtype=np.int64))
        if rows.shape != x.shape:
            raise bad_value("source_rows", f"one row number per point ({x.size})",
                            f"shape {rows.shape}")
        arrays = {}
        for k, v in dict(self.values).items():
            if k not in QUANTITIES:
                raise bad_value("values", "keyed by names of ttsp.data.QUANTITIES "
                                f"({', '.join(QUANTITIES)})", k)
            arr = np.asarray(v, dtype=float)
            if arr.shape != x.shape:
                raise bad_value(f"values[{k!r}]", f"one value per x point ({x.size})",
                                f"shape {arr.shape}")
            arrays[k] = arr
        order = np.argsort(x, kind="stable")
        xs = x[order]
        same = np.flatnonzero(np.diff(xs) == 0)
        if same.size:
            raise bad_value("x", "free of repeated values at one temperature", float(xs[same[0]]))
        vals = {k: _readonly(v[order]) for k, v in arrays.items()}
        rows = rows[order].copy()
        rows.setflags(write=False)
        object.__setattr__(self, "temperature_K", t)
        object.__setattr__(self, "x", _readonly(xs))
        object.__setattr__(self, "values", MappingProxyType(vals))
        object.__setattr__(self, "source_rows", rows)

    def __eq__(self, other):
        if not isinstance(other, Isotherm):
            return NotImplemented
        return (self.temperature_K == other.temperature_K and _same_array(self.x, other.x)
                and set(self.values) == set(other.values)
                and all(_same_array(v, other.values[k]) for k, v in self.values.items())
                and _same_array(self.source_rows, other.source_rows))

    __hash__ = None  # type: ignore[assignment]  # holds arrays: equal by value, not hashable

    @property
    def temperature_C(self) -> float:
        return float(kelvin_to_celsius(self.temperature_K))

    @property
    def n_points(self) -> int:
        return int(self.x.size)

    def __len__(self) -> int:
        return self.n_points


@dataclass(frozen=True, eq=False)
class Campaign:
    """A temperature campaign: isotherms in ascending temperature with their metadata.

    Build one with :meth:`from_frame` (validates) or through :mod:`ttsp.io.readers`.
    Two campaigns are equal when their isotherms and all metadata are equal.
    """

    isotherms: tuple
    domain: str
    modulus_kind: str = "tensile"
    source: str = ""
    units_as_read: Mapping[str, str] = field(default_factory=dict)
    metadata: Mapping[str, str] = field(default_factory=dict)
    dropped_rows: Mapping[str, int] = field(default_factory=dict)

    def __post_init__(self):
        if self.domain not in DOMAINS:
            raise bad_value("domain", "'frequency' or 'time'", self.domain)
        if self.modulus_kind not in MODULUS_KINDS:
            raise bad_value("modulus_kind", "'tensile' or 'shear'", self.modulus_kind)
        isos = tuple(self.isotherms)
        for k, iso in enumerate(isos):
            if not isinstance(iso, Isotherm):
                raise bad_value(f"isotherms[{k}]", "an Isotherm", type(iso).__name__)
        isos = tuple(sorted(isos, key=lambda i: i.temperature_K))
        object.__setattr__(self, "isotherms", isos)
        for name in ("units_as_read", "metadata", "dropped_rows"):
            object.__setattr__(self, name, MappingProxyType(dict(getattr(self, name) or {})))

    def __eq__(self, other):
        if not isinstance(other, Campaign):
            return NotImplemented
        return (self.domain == other.domain and self.modulus_kind == other.modulus_kind
                and self.source == other.source and len(self) == len(other)
                and all(a == b for a, b in zip(self.isotherms, other.isotherms, strict=True))
                and dict(self.units_as_read) == dict(other.units_as_read)
                and dict(self.metadata) == dict(other.metadata)
                and dict(self.dropped_rows) == dict(other.dropped_rows))

    __hash__ = None  # type: ignore[assignment]  # holds isotherms: not hashable

    # ---- views -------------------------------------------------------------------------------
    @property
    def x_name(self) -> str:
        """``"frequency_rad_s"`` or ``"time_s"``."""
        return X_COLUMN[self.domain]

    @property
    def temperatures_K(self) -> np.ndarray:
        return np.array([i.temperature_K for i in self.isotherms])

    @property
    def temperatures_C(self) -> np.ndarray:
        return kelvin_to_celsius(self.temperatures_K)

    @property
    def n_points(self) -> int:
        return sum(i.n_points for i in self.isotherms)

    @property
    def quantities(self) -> tuple:
        """Material functions present in every isotherm, in the order of :data:`QUANTITIES`."""
        if not self.isotherms:
            return ()
        common = set.intersection(*(set(i.values) for i in self.isotherms))
        return tuple(q for q in QUANTITIES if q in common)

    def measured_points(self) -> dict[str, int]:
        """Finite (measured) points per function; fewer than :attr:`n_points` when the
        functions were measured at their own times (relaxation and creep read from two files)."""
        return {q: sum(int(np.isfinite(i.values[q]).sum()) for i in self.isotherms)
                for q in self.quantities}

    def symbol(self, quantity: str) -> str:
        """The symbol of a quantity for this campaign's modulus kind (E' or G', ...)."""
        return QUANTITIES[quantity].symbol(self.modulus_kind)

    def __len__(self) -> int:
        return len(self.isotherms)

    # ---- derived functions -------------------------------------------------------------------
    def with_derived(self) -> Campaign:
        """Return a campaign in which every frequency-domain function that follows from the
        measured ones is filled in: E', E'' from |E*| and δ (E' = |E*| cos δ, E'' = |E*| sin δ),
        tan δ = E''/E', |E*| = √(E'² + E''²), δ = atan2(E'', E'). Measured values are kept as they are.
        """
        if self.domain != "frequency":
            return self
        cached = self.__dict__.get("_derived")
        if cached is not None:  # a frozen campaign derives the same functions every time
            return cached
        new = []
        for iso in self.isotherms:
            v = dict(iso.values)
            if "storage_modulus_Pa" not in v and {"complex_modulus_Pa", "phase_angle_rad"} <= v.keys():
                v["storage_modulus_Pa"] = v["complex_modulus_Pa"] * np.cos(v["phase_angle_rad"])
                v["loss_modulus_Pa"] = v.get("loss_modulus_Pa",
                                             v["complex_modulus_Pa"] * np.sin(v["phase_angle_rad"]))
            if "storage_modulus_Pa" not in v and {"loss_modulus_Pa", "tan_delta"} <= v.keys():
                v["storage_modulus_Pa"] = v["loss_modulus_Pa"] / v["tan_delta"]
            if "loss_modulus_Pa" not in v and {"storage_modulus_Pa", "tan_delta"} <= v.keys():
                v["loss_modulus_Pa"] = v["storage_modulus_Pa"] * v["tan_delta"]
            if {"storage_modulus_Pa", "loss_modulus_Pa"} <= v.keys():
                ep, epp = v["storage_modulus_Pa"], v["loss_modulus_Pa"]
                v.setdefault("tan_delta", epp / ep)
                v.setdefault("complex_modulus_Pa", np.hypot(ep, epp))
                v.setdefault("phase_angle_rad", np.arctan2(epp, ep))
            new.append(Isotherm(iso.temperature_K, iso.x, v, iso.source_rows))
        derived = Campaign(tuple(new), self.domain, self.modulus_kind, self.source,
                        self.units_as_read, self.metadata, self.dropped_rows)
        object.__setattr__(derived, "_derived", derived)
        object.__setattr__(self, "_derived", derived)
        return derived

    # ---- frames ------------------------------------------------------------------------------
    def to_frame(self):
        """Tidy DataFrame, one row per point: isotherm, temperature_K, x, quantities, source_row.

        A quantity measured in some isotherms only is NaN in the others. ``frame.attrs`` carries
        domain, modulus kind, source, units as read, metadata and dropped rows, so that
        :meth:`from_frame` rebuilds an equal campaign.
        """
        import pandas as pd

        quantities = [q for q in QUANTITIES if any(q in i.values for i in self.isotherms)]
        columns = ["isotherm", "temperature_K", self.x_name] + quantities + ["source_row"]
        parts = []
        for k, iso in enumerate(self.isotherms):
            cols = {"isotherm": np.full(iso.n_points, k, dtype=np.int64),
                    "temperature_K": np.full(iso.n_points, iso.temperature_K),
                    self.x_name: np.array(iso.x)}
            for q in quantities:
                cols[q] = np.array(iso.values[q]) if q in iso.values else np.full(iso.n_points, np.nan)
            cols["source_row"] = np.array(iso.source_rows)
            parts.append(pd.DataFrame(cols, columns=columns))
        frame = (pd.concat(parts, ignore_index=True) if parts
                 else pd.DataFrame({c: pd.Series(dtype=float) for c in columns}))
        frame.attrs.update(domain=self.domain, modulus_kind=self.modulus_kind, source=self.source,
                           units_as_read=dict(self.units_as_read), metadata=dict(self.metadata),
                           dropped_rows=dict(self.dropped_rows))
        return frame

    @classmethod
    def from_frame(cls, frame, *, domain: str | None = None, modulus_kind: str | None = None,
                   source: str = "", temperature_tolerance_K: float = 0.5,
                   column_labels: Mapping[str, str] | None = None,
                   units_as_read: Mapping[str, str] | None = None,
                   metadata: Mapping[str, str] | None = None,
                   dropped_rows: Mapping[str, int] | None = None,
                   min_isotherms: int = 2, repeats: str = "merge") -> Campaign:
        """Validate a tidy SI frame and group its rows into isotherms.

        Parameters
        ----------
        frame : DataFrame
            Columns ``temperature_K`` (K), ``frequency_rad_s`` (rad/s) or ``time_s`` (s), and at
            least one of :data:`QUANTITIES` (SI). Optional: ``source_row`` (1-based file line of
            each row), ``source_file`` (the file each row came from, for messages), and
            ``isotherm`` (an isotherm label per row, as written by :meth:`to_frame`: when
            present it groups the rows and the tolerance is not used).
        temperature_tolerance_K : float
            Points whose temperatures lie within this distance (K) of their neighbours in sorted
            order form one isotherm (a controller holds about ±0.5 K, so 24.9 °C and 25.1 °C are
            one); see :func:`group_temperatures`.
        column_labels : mapping, optional
            The original header of each SI column, so messages name what the user wrote.
        units_as_read : mapping, optional
            Unit as read for each original header; bad values in messages are shown in it.
        metadata, dropped_rows : mapping, optional
            Carried into the campaign (default: from ``frame.attrs``, else empty).
        min_isotherms : int
            Fewest isotherms accepted (superposition needs two).
        repeats : {"merge", "refuse"}
            Time-domain data: rows of one isotherm at the same time (an instrument that prints
            four significant digits repeats times on long sweeps) are merged into one point, the
            mean of their log10 values, and counted in ``dropped_rows`` under
            :data:`REPEATS_MERGED`; repeats whose values differ far beyond the noise are refused
            (:mod:`ttsp._repeats`). ``"refuse"`` refuses every repeat. A repeated frequency is
            always refused.

        A quantity may be missing (all NaN) in some isotherms, but not partly missing in one.
        The frame is not modified.

        Raises
        ------
        DataError
            Naming file, column and first bad row: a missing column, a non-numeric, NaN or
            non-finite value, a non-positive value where a logarithm is needed, a temperature at
            or below absolute zero, a duplicate point, fewer than ``min_isotherms`` isotherms.
        """
        labels = dict(column_labels or {})
        settings = _frame_settings(
            frame, domain=domain, modulus_kind=modulus_kind, source=source,
            units_as_read=units_as_read, metadata=metadata, dropped_rows=dropped_rows,
            temperature_tolerance_K=temperature_tolerance_K, repeats=repeats)
        x_name = X_COLUMN[settings.domain]
        quantities = measured_quantities(frame, settings.domain, x_name, settings.source, labels)
        rows = FrameRows.of(frame, settings.source, labels, settings.units_as_read)
        temps, x_all = checked_temperature_and_x(frame, x_name, rows)
        groups = _isotherm_groups(frame, temps, settings.temperature_tolerance_K)
        values = checked_measured_values(frame, quantities, groups, rows)
        if not values:
            raise DataError(f"{where(settings.source)}no measured material function has any "
                            f"value: need at least one of {needed_quantities(settings.domain)}; "
                            f"columns found: {columns_found(frame, labels)}")
        isotherms, merged = _isotherms_of_groups(groups, temps, x_all, values, rows,
                                                 settings, x_name)
        if len(isotherms) < min_isotherms:
            t = ", ".join(f"{kelvin_to_celsius(i.temperature_K):.4g} °C" for i in isotherms)
            raise DataError(f"{where(settings.source, rows.label('temperature_K'))}superposition "
                            f"needs at least {min_isotherms} isotherms; found {len(isotherms)} "
                            f"({t}) with a grouping tolerance of "
                            f"{settings.temperature_tolerance_K:g} K")
        dropped = settings.dropped_rows
        if merged:
            dropped = {**dict(dropped), REPEATS_MERGED: merged}
        return cls(tuple(isotherms), settings.domain, settings.modulus_kind, settings.source,
                   settings.units_as_read, settings.metadata, dropped)

    # ---- notebooks ---------------------------------------------------------------------------
    def summary_rows(self) -> list:
        """One dict per isotherm: temperature, number of points, x range."""
        out = []
        for iso in self.isotherms:
            out.append({"temperature_C": round(iso.temperature_C, 6), "points": iso.n_points,
                        f"{self.x_name}_min": float(iso.x[0]), f"{self.x_name}_max": float(iso.x[-1]),
                        "quantities": ", ".join(self.symbol(q) for q in iso.values)})
        return out

    def _repr_html_(self) -> str:
        unit, scale = ("Hz", 1 / (2 * np.pi)) if self.domain == "frequency" else ("s", 1.0)
        xname = "frequency" if self.domain == "frequency" else "time"
        head = (f"<b>Campaign</b> {escape(str(self.source or ''))}: {len(self)} isotherms, "
                f"{self.n_points} points, {self.domain} domain, {self.modulus_kind}")
        rows = "".join(f"<tr><td>{iso.temperature_C:.2f}</td><td>{iso.n_points}</td>"
                       f"<td>{iso.x[0] * scale:.3g} – {iso.x[-1] * scale:.3g}</td>"
                       f"<td>{escape(', '.join(self.symbol(q) for q in iso.values))}</td></tr>"
                       for iso in self.isotherms)
        return (f"<div>{head}<table><tr><th>T (°C)</th><th>points</th><th>{xname} ({unit})</th>"
                f"<th>functions</th></tr>{rows}</table></div>")

    def __repr__(self) -> str:
        t = self.temperatures_C
        span = f"{t.min():.4g} to {t.max():.4g} °C" if len(t) else "no isotherms"
        return (f"Campaign({len(self)} isotherms, {span}, {self.n_points} points, {self.domain}, "
                f"{self.modulus_kind}, source={str(self.source)!r})")


@dataclass(frozen=True)
class _FrameSettings:
    """The settings of one :meth:`Campaign.from_frame` call: as given, else from the frame's
    ``attrs`` (as :meth:`Campaign.to_frame` writes them), else the defaults; checked."""

    domain: str
    modulus_kind: str
    source: str
    units_as_read: Mapping[str, str]
    metadata: Mapping[str, str]
    dropped_rows: Mapping[str, int]
    temperature_tolerance_K: float
    repeats: str


def _frame_settings(frame, *, domain, modulus_kind, source, units_as_read, metadata,
                    dropped_rows, temperature_tolerance_K, repeats) -> _FrameSettings:
    """Fill what :meth:`Campaign.from_frame` was not given from ``frame.attrs``; a domain
    neither given nor stored is the x column's, else that of the measured functions."""
    attrs = getattr(frame, "attrs", {}) or {}
    if not domain:
        domain = attrs.get("domain")
    if not domain:  # from the x column, else from the measured functions
        named = [QUANTITIES[q].domain for q in QUANTITIES if q in frame.columns]
        domain = ("frequency" if "frequency_rad_s" in frame.columns else
                  "time" if "time_s" in frame.columns else
                  named[0] if named else "frequency")
    modulus_kind = modulus_kind or attrs.get("modulus_kind") or "tensile"
    source = source or attrs.get("source", "")
    if units_as_read is None:
        units_as_read = attrs.get("units_as_read") or {}
    if metadata is None:
        metadata = attrs.get("metadata") or {}
    if dropped_rows is None:
        dropped_rows = attrs.get("dropped_rows") or {}
    if domain not in DOMAINS:
        raise bad_value("domain", "'frequency' or 'time'", domain, file=source)
    if modulus_kind not in MODULUS_KINDS:
        raise bad_value("modulus_kind", "'tensile' or 'shear'", modulus_kind, file=source)
    tol = check_positive("temperature_tolerance_K", temperature_tolerance_K, allow_zero=True)
    if repeats not in REPEAT_POLICIES:
        raise bad_value("repeats", "'merge' or 'refuse'", repeats, file=source)
    return _FrameSettings(domain, modulus_kind, source, units_as_read, metadata, dropped_rows,
                          tol, repeats)


def _isotherm_groups(frame, temperature_K: np.ndarray, tolerance_K: float) -> list:
    """The rows of each isotherm, as index arrays: by the ``isotherm`` label that
    :meth:`Campaign.to_frame` writes, else by temperature within the tolerance
    (:func:`group_temperatures`)."""
    if "isotherm" in frame.columns:
        tags = np.asarray(frame["isotherm"])
        return [np.flatnonzero(tags == tag) for tag in dict.fromkeys(tags.tolist())]
    return group_temperatures(temperature_K, tolerance_K)


def _isotherms_of_groups(groups: list, temperature_K: np.ndarray, x_all: np.ndarray,
                         values: Mapping, rows: FrameRows, settings: _FrameSettings,
                         x_name: str) -> tuple:
    """``(isotherms, merged)``: one :class:`Isotherm` per group of rows, at the mean
    temperature of its points, with the functions present in it; time-domain repeats merged
    (``merged`` counts the rows merged away) or refused; a repeated x refused."""
    isotherms, merged = [], 0
    for g, members in enumerate(groups):
        x = x_all[members]
        vals = {q: v[members] for q, (v, absent) in values.items() if not absent[g]}
        if settings.domain == "time" and settings.repeats == "merge":
            m = merge_repeats(x, vals, {q: QUANTITIES[q].positive for q in vals})
            if m.conflict is not None:
                _refuse_conflicting_repeat(m.conflict, members, x_all, rows, x_name)
            merged += m.merged
            members, x, vals = members[m.order], x[m.order], m.values
        dup = _first_duplicate(x)
        if dup is not None:
            a, b = members[dup[0]], members[dup[1]]
            what = "frequency" if settings.domain == "frequency" else "time"
            raise DataError(f"{rows.at(x_name, b)}duplicate point: the same {what} "
                            f"{rows.shown(x_name, x_all[b])} at the same temperature as "
                            f"{rows.earlier_row(a, b)}")
        t = temperature_K[members]
        t_mean = float(t[0]) if np.all(t == t[0]) else float(np.mean(t))
        isotherms.append(Isotherm(t_mean, x, vals, rows.rows[members]))
    return isotherms, merged


def _refuse_conflicting_repeat(conflict: tuple, members: np.ndarray, x_all: np.ndarray,
                               rows: FrameRows, x_name: str) -> None:
    """Two rows at one printed time whose values differ far beyond the noise
    (:func:`ttsp._repeats.merge_repeats`): not a rounded time stamp."""
    q, a, b, spread, limit = conflict
    a, b = members[a], members[b]
    raise DataError(f"{rows.at(q, b)}repeated time {rows.shown(x_name, x_all[b])} at the "
                    f"same temperature as {rows.earlier_row(a, b)}, with values {spread:.3g} "
                    f"decade apart, far beyond the noise ({limit:.3g} decade): "
                    f"not a rounded time stamp; check the file")


def group_temperatures(temperature_K: ArrayLike, tolerance_K: float) -> list:
    """Group indices of points whose temperatures chain within ``tolerance_K`` of each other.

    Sort the temperatures; a new group starts wherever the step to the next one exceeds the
    tolerance, or where the group would span more than twice the tolerance (a slow drift is split
    rather than merged). Returns index arrays in ascending temperature order.
    """
    t = np.asarray(temperature_K, dtype=float)
    order = np.argsort(t, kind="stable")
    ts = t[order]
    if ts.size == 0:
        return []
    # Equal temperatures never split a group (their step is 0 and the span is that of the
    # first of them), so the chaining runs over the distinct values only: a campaign of a
    # million points has a few hundred.
    distinct, first = np.unique(ts, return_index=True)
    starts, start = [], 0
    for k in range(1, distinct.size):
        if (distinct[k] - distinct[k - 1] > tolerance_K
                or distinct[k] - distinct[start] > 2 * tolerance_K):
            starts.append(int(first[k]))
            start = k
    bounds = [0] + starts + [ts.size]
    return [np.sort(order[a:b]) for a, b in pairwise(bounds)]


def _first_duplicate(x):
    order = np.argsort(x, kind="stable")
    xs = x[order]
    same = np.flatnonzero(np.diff(xs) == 0)
    if same.size == 0:
        return None
    i = same[0]
    return int(min(order[i], order[i + 1])), int(max(order[i], order[i + 1]))
