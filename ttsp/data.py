"""The campaign model: isotherms of measured material functions, immutable, SI and kelvin inside.

An :class:`Isotherm` is one temperature's measurement: the independent variable (angular frequency
in rad/s or time in s, ascending) and the material functions that were measured at it. A
:class:`Campaign` holds its isotherms in temperature order with the metadata needed to read the
numbers back: domain, modulus kind (tensile E/D or shear G/J), where the data came from and the
units as they were read. Both are frozen; their arrays are read-only.

Tidy frames use the column names of :data:`QUANTITIES` plus ``temperature_K``, ``x`` named
``frequency_rad_s`` or ``time_s``, ``isotherm`` (0-based, in temperature order) and ``source_row``
(the line of the input file a point came from, 1-based, or -1 when unknown).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Mapping

import numpy as np

from ._validation import bad_value, where
from .exceptions import DataError
from .units import kelvin_to_celsius

__all__ = ["Quantity", "QUANTITIES", "Isotherm", "Campaign", "DOMAINS", "MODULUS_KINDS",
           "X_COLUMN"]

DOMAINS = ("frequency", "time")
MODULUS_KINDS = ("tensile", "shear")
X_COLUMN = {"frequency": "frequency_rad_s", "time": "time_s"}


@dataclass(frozen=True)
class Quantity:
    """A measured material function: its column name, unit kind and symbols."""

    name: str
    unit_kind: str
    domain: str
    tensile_symbol: str
    shear_symbol: str
    positive: bool  # must be > 0 (it is taken in a logarithm)
    label: str

    def symbol(self, modulus_kind: str) -> str:
        return self.tensile_symbol if modulus_kind == "tensile" else self.shear_symbol


QUANTITIES: Mapping[str, Quantity] = MappingProxyType({q.name: q for q in (
    Quantity("storage_modulus_Pa", "modulus", "frequency", "E'", "G'", True, "storage modulus"),
    Quantity("loss_modulus_Pa", "modulus", "frequency", "E''", "G''", True, "loss modulus"),
    Quantity("tan_delta", "dimensionless", "frequency", "tan δ", "tan δ", True, "loss factor tan δ"),
    Quantity("complex_modulus_Pa", "modulus", "frequency", "|E*|", "|G*|", True,
             "complex modulus magnitude"),
    Quantity("phase_angle_rad", "angle", "frequency", "δ", "δ", True, "phase angle"),
    Quantity("relaxation_modulus_Pa", "modulus", "time", "E(t)", "G(t)", True,
             "relaxation modulus"),
    Quantity("creep_compliance_1_per_Pa", "compliance", "time", "D(t)", "J(t)", True,
             "creep compliance"),
)})


def _readonly(a) -> np.ndarray:
    arr = np.array(a, dtype=float, copy=True)
    arr.setflags(write=False)
    return arr


@dataclass(frozen=True)
class Isotherm:
    """One temperature's measurement.

    Parameters
    ----------
    temperature_K : float
        Mean temperature of the points grouped into this isotherm, in K.
    x : array
        Angular frequency in rad/s or time in s, strictly ascending after construction.
    values : mapping of str to array
        Measured functions by the names of :data:`QUANTITIES`, in SI units.
    source_rows : array of int, optional
        The input-file line each point came from (1-based), for messages and traceability.
    """

    temperature_K: float
    x: np.ndarray
    values: Mapping[str, np.ndarray]
    source_rows: np.ndarray = field(default=None)

    def __post_init__(self):
        x = np.asarray(self.x, dtype=float)
        rows = (np.full(x.shape, -1, dtype=np.int64) if self.source_rows is None
                else np.asarray(self.source_rows, dtype=np.int64))
        order = np.argsort(x, kind="stable")
        vals = {k: _readonly(np.asarray(v, dtype=float)[order]) for k, v in self.values.items()}
        rows = rows[order].copy()
        rows.setflags(write=False)
        object.__setattr__(self, "temperature_K", float(self.temperature_K))
        object.__setattr__(self, "x", _readonly(x[order]))
        object.__setattr__(self, "values", MappingProxyType(vals))
        object.__setattr__(self, "source_rows", rows)

    @property
    def temperature_C(self) -> float:
        return float(kelvin_to_celsius(self.temperature_K))

    @property
    def n_points(self) -> int:
        return int(self.x.size)

    def __len__(self) -> int:
        return self.n_points


@dataclass(frozen=True)
class Campaign:
    """A temperature campaign: isotherms in ascending temperature with their metadata.

    Build one with :meth:`from_frame` (validates) or through :mod:`ttsp.io.readers`.
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
        isos = tuple(sorted(self.isotherms, key=lambda i: i.temperature_K))
        object.__setattr__(self, "isotherms", isos)
        for name in ("units_as_read", "metadata", "dropped_rows"):
            object.__setattr__(self, name, MappingProxyType(dict(getattr(self, name))))

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

    def symbol(self, quantity: str) -> str:
        """The symbol of a quantity for this campaign's modulus kind (E' or G', ...)."""
        return QUANTITIES[quantity].symbol(self.modulus_kind)

    def __len__(self) -> int:
        return len(self.isotherms)

    # ---- derived functions -------------------------------------------------------------------
    def with_derived(self) -> "Campaign":
        """Return a campaign in which every frequency-domain function that follows from the
        measured ones is filled in: E', E'' from |E*| and δ (E' = |E*| cos δ, E'' = |E*| sin δ),
        tan δ = E''/E', |E*| = √(E'² + E''²), δ = atan2(E'', E'). Measured values are kept as they are.
        """
        if self.domain != "frequency":
            return self
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
        return Campaign(tuple(new), self.domain, self.modulus_kind, self.source,
                        self.units_as_read, self.metadata, self.dropped_rows)

    # ---- frames ------------------------------------------------------------------------------
    def to_frame(self):
        """Tidy DataFrame, one row per point: isotherm, temperature_K, x, quantities, source_row."""
        import pandas as pd

        quantities = [q for q in QUANTITIES if any(q in i.values for i in self.isotherms)]
        parts = []
        for k, iso in enumerate(self.isotherms):
            cols = {"isotherm": np.full(iso.n_points, k),
                    "temperature_K": np.full(iso.n_points, iso.temperature_K),
                    self.x_name: iso.x}
            for q in quantities:
                cols[q] = iso.values.get(q, np.full(iso.n_points, np.nan))
            cols["source_row"] = iso.source_rows
            parts.append(pd.DataFrame(cols))
        frame = pd.concat(parts, ignore_index=True)
        frame.attrs.update(domain=self.domain, modulus_kind=self.modulus_kind, source=self.source)
        return frame

    @classmethod
    def from_frame(cls, frame, *, domain: str | None = None, modulus_kind: str | None = None,
                   source: str = "", temperature_tolerance_K: float = 0.5,
                   column_labels: Mapping[str, str] | None = None,
                   units_as_read: Mapping[str, str] | None = None,
                   metadata: Mapping[str, str] | None = None,
                   dropped_rows: Mapping[str, int] | None = None,
                   min_isotherms: int = 2) -> "Campaign":
        """Validate a tidy SI frame and group its rows into isotherms.

        Parameters
        ----------
        frame : DataFrame
            Columns ``temperature_K``, ``frequency_rad_s`` or ``time_s``, and at least one of
            :data:`QUANTITIES`; optional ``source_row`` (1-based file line of each row).
        temperature_tolerance_K : float
            Points whose temperatures lie within this distance of their neighbours in sorted order
            form one isotherm (a controller holds about ±0.5 K, so 24.9 °C and 25.1 °C are one).
        column_labels : mapping, optional
            The original header of each SI column, so messages name what the user wrote.

        Raises
        ------
        DataError
            Naming file, column and first bad row: a missing column, NaN or non-finite value,
            a non-positive value where a logarithm is needed, a duplicate point, fewer than
            ``min_isotherms`` isotherms.
        """
        labels = dict(column_labels or {})
        attrs = getattr(frame, "attrs", {}) or {}
        domain = domain or attrs.get("domain") or (
            "frequency" if "frequency_rad_s" in frame.columns else "time")
        modulus_kind = modulus_kind or attrs.get("modulus_kind") or "tensile"
        source = source or attrs.get("source", "")
        if domain not in DOMAINS:
            raise bad_value("domain", "'frequency' or 'time'", domain, file=source)
        x_name = X_COLUMN[domain]

        def label(col):
            return labels.get(col, col)

        for col in ("temperature_K", x_name):
            if col not in frame.columns:
                what = "a temperature column" if col == "temperature_K" else (
                    "a frequency column" if domain == "frequency" else "a time column")
                raise DataError(f"{where(source)}missing {what} ({col}); "
                                f"columns found: {', '.join(map(str, labels.values() or frame.columns))}")
        quantities = [q for q in QUANTITIES if q in frame.columns]
        if not quantities:
            raise DataError(f"{where(source)}no measured material function found: need at least one "
                            f"of {', '.join(q for q in QUANTITIES if QUANTITIES[q].domain == domain)}")
        wrong = [q for q in quantities if QUANTITIES[q].domain != domain]
        if wrong:
            raise DataError(f"{where(source, label(wrong[0]))}{QUANTITIES[wrong[0]].label} does not "
                            f"belong to {domain}-domain data")
        rows = (np.asarray(frame["source_row"], dtype=np.int64) if "source_row" in frame.columns
                else np.arange(len(frame), dtype=np.int64) + 2)
        if len(frame) == 0:
            raise DataError(f"{where(source)}no data rows")
        for col in ["temperature_K", x_name] + quantities:
            raw = frame[col]
            try:
                vals = np.asarray(raw, dtype=float)
            except (TypeError, ValueError):
                import pandas as pd

                num = pd.to_numeric(raw, errors="coerce")
                bad = int(np.flatnonzero(num.isna() & raw.notna())[0])
                raise DataError(f"{where(source, label(col), int(rows[bad]))}value must be a number; "
                                f"got {raw.iloc[bad]!r}") from None
            nonfinite = ~np.isfinite(vals)
            if col in quantities:
                # a quantity may be absent in some isotherms (a blank column), but not partly blank
                pass
            if nonfinite.any() and (col not in quantities or not nonfinite.all()):
                bad = int(np.flatnonzero(nonfinite)[0])
                raise DataError(f"{where(source, label(col), int(rows[bad]))}value must be a finite "
                                f"number; got {vals[bad]!r}")
            must_be_positive = col == x_name or (col in quantities and QUANTITIES[col].positive)
            if col == "temperature_K":
                nonpos = vals <= 0
                rule = "above absolute zero"
            else:
                nonpos = must_be_positive & (vals <= 0)
                rule = "positive (it is taken in a logarithm)"
            if np.any(nonpos):
                bad = int(np.flatnonzero(nonpos)[0])
                raise DataError(f"{where(source, label(col), int(rows[bad]))}value must be {rule}; "
                                f"got {vals[bad]!r}")
        quantities = [q for q in quantities if np.isfinite(np.asarray(frame[q], dtype=float)).any()]

        temps = np.asarray(frame["temperature_K"], dtype=float)
        groups = group_temperatures(temps, temperature_tolerance_K)
        isotherms = []
        x_all = np.asarray(frame[x_name], dtype=float)
        for members in groups:
            x = x_all[members]
            dup = _first_duplicate(x)
            if dup is not None:
                a, b = members[dup[0]], members[dup[1]]
                raise DataError(f"{where(source, label(x_name), int(rows[b]))}duplicate point: the "
                                f"same {x_name.split('_')[0]} {x_all[b]:g} at the same temperature as "
                                f"row {int(rows[a])}")
            vals = {q: np.asarray(frame[q], dtype=float)[members] for q in quantities}
            isotherms.append(Isotherm(float(np.mean(temps[members])), x, vals, rows[members]))
        if len(isotherms) < min_isotherms:
            t = ", ".join(f"{kelvin_to_celsius(i.temperature_K):.4g} °C" for i in isotherms)
            raise DataError(f"{where(source, label('temperature_K'))}superposition needs at least "
                            f"{min_isotherms} isotherms; found {len(isotherms)} ({t}) with a "
                            f"grouping tolerance of {temperature_tolerance_K:g} K")
        return cls(tuple(isotherms), domain, modulus_kind, source, units_as_read or {},
                   metadata or {}, dropped_rows or {})

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
        head = (f"<b>Campaign</b> {self.source or ''}: {len(self)} isotherms, {self.n_points} points, "
                f"{self.domain} domain, {self.modulus_kind}")
        rows = "".join(f"<tr><td>{r['temperature_C']:.2f}</td><td>{r['points']}</td>"
                       f"<td>{list(r.values())[2]:.3g} – {list(r.values())[3]:.3g}</td>"
                       f"<td>{r['quantities']}</td></tr>" for r in self.summary_rows())
        return (f"<div>{head}<table><tr><th>T (°C)</th><th>points</th><th>{self.x_name}</th>"
                f"<th>functions</th></tr>{rows}</table></div>")


def group_temperatures(temperature_K, tolerance_K: float) -> list:
    """Group indices of points whose temperatures chain within ``tolerance_K`` of each other.

    Sort the temperatures; a new group starts wherever the step to the next one exceeds the
    tolerance, or where the group would span more than twice the tolerance (a slow drift is split
    rather than merged). Returns index arrays in ascending temperature order.
    """
    t = np.asarray(temperature_K, dtype=float)
    order = np.argsort(t, kind="stable")
    groups, start = [], 0
    for j in range(1, len(order) + 1):
        if (j == len(order) or t[order[j]] - t[order[j - 1]] > tolerance_K
                or t[order[j]] - t[order[start]] > 2 * tolerance_K):
            groups.append(np.sort(order[start:j]))
            start = j
    return groups


def _first_duplicate(x):
    order = np.argsort(x, kind="stable")
    xs = x[order]
    same = np.flatnonzero(np.diff(xs) == 0)
    if same.size == 0:
        return None
    i = same[0]
    return int(min(order[i], order[i + 1])), int(max(order[i], order[i + 1]))
