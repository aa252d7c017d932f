"""Closed-form master-curve models with a few parameters, fitted with lmfit.

For users who prefer a handful of parameters to a Prony series, and as an independent check of
one. The models live in a registry (:data:`MODELS`), each with its equation and source:

* ``sigmoid`` - the sigmoidal model of the dynamic modulus used for asphalt mixes
  (Pellinen & Witczak 2002; docs/methods.md §8):
  log10|E*| = δ + α/(1 + exp(β + γ·log10 f_r)), f_r = ω_r/(2π) the reduced frequency in Hz.
  δ is the lower (equilibrium) and δ + α the upper (glassy) log10 modulus (log10 Pa); the
  inflection lies at log10 f_r = −β/γ; γ < 0 in this frequency form.
* ``havriliak_negami`` - E*(ω) = E_r + ΔE[1 − (1 + (iωτ)^α)^(−β)], 0 < α ≤ 1, 0 < αβ ≤ 1
  (Havriliak & Negami, Polymer 8:161, 1967, transcribed to the modulus; docs/methods.md §8).
* ``cole_cole`` - the case β = 1: E* = E_r + ΔE (iωτ)^α/(1 + (iωτ)^α)
  (Cole & Cole, J. Chem. Phys. 9:341, 1941).
* ``cole_davidson`` - the case α = 1: E* = E_r + ΔE[1 − (1 + iωτ)^(−β)]
  (Davidson & Cole, J. Chem. Phys. 19:1484, 1951).

Fits return a frozen :class:`ClosedFormFit` (lmfit inside, plain floats outside) that
evaluates itself and compares itself with a Prony fit on the same data
(:meth:`ClosedFormFit.compare_with`, :func:`compare_models`).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from ._arrays import nonnegative_argument as _evaluation_argument
from ._arrays import readonly as _readonly
from ._arrays import scalar_or_array as _scalar_or_array
from ._arrays import to_plain as _plain
from ._validation import bad_value, check_choice
from .exceptions import FitError
from .model_comparison import FitComparison, compare_models
from .prony import PronyFit, PronySeries
from .prony.fit_result import frozen_map
from .prony.nnls import measured_values, positive_abscissa
from .result_contract import ResultContract, none_as_nan, stderr_or_nan

__all__ = ["ClosedFormModel", "MODELS", "ClosedFormFit", "FitComparison",
           "fit_closed_form", "fit_sigmoid", "fit_havriliak_negami", "compare_models",
           "sigmoid_log10_modulus", "havriliak_negami_modulus", "hn_loss_peak_omega_tau"]


# --------------------------------------------------------------------------- the equations
def sigmoid_log10_modulus(omega_rad_s: ArrayLike, delta: float, alpha: float, beta: float,
                          gamma: float) -> np.ndarray:
    """log10|E*| = δ + α/(1 + exp(β + γ log10 f_r)) with f_r = ω/(2π) (Hz).

    Pellinen & Witczak 2002 (docs/methods.md §8). δ, α in log10 Pa (δ + α is the glassy plateau),
    β and γ dimensionless; ``omega_rad_s`` in rad/s.
    """
    logf = np.log10(np.asarray(omega_rad_s, dtype=float) / (2 * np.pi))
    return delta + alpha / (1.0 + np.exp(beta + gamma * logf))


def havriliak_negami_modulus(omega_rad_s: ArrayLike, relaxed_modulus_Pa: float,
                             relaxation_strength_Pa: float, tau_s: float, alpha: float,
                             beta: float) -> np.ndarray:
    """E*(ω) = E_r + ΔE[1 − (1 + (iωτ)^α)^(−β)] (Pa, complex).

    Havriliak & Negami 1967 in modulus form (docs/methods.md §8): E_r relaxed modulus (Pa),
    ΔE = E_u − E_r relaxation strength (Pa), τ (s), 0 < α ≤ 1, 0 < αβ ≤ 1; ω in rad/s.
    β = 1 is Cole-Cole, α = 1 Cole-Davidson, α = β = 1 the standard linear solid.
    """
    w = np.asarray(omega_rad_s, dtype=float)
    return relaxed_modulus_Pa + relaxation_strength_Pa * (
        1.0 - (1.0 + (1j * w * tau_s) ** alpha) ** (-beta))


def hn_loss_peak_omega_tau(alpha: float, beta: float) -> float:
    """ω_max·τ of the Havriliak-Negami loss peak,
    [sin(απ/(2β+2)) / sin(αβπ/(2β+2))]^(1/α) (Díaz-Calleja, Macromolecules 33:8924, 2000;
    docs/methods.md §8, verified numerically there)."""
    a, b = float(alpha), float(beta)
    ratio = math.sin(a * math.pi / (2 * b + 2)) / math.sin(a * b * math.pi / (2 * b + 2))
    return ratio ** (1 / a)


@dataclass(frozen=True)
class ClosedFormModel:
    """A registered closed-form model: name, parameters (with units), data it describes,
    equation and literature source."""

    name: str
    parameters: tuple
    units: tuple
    fits: str  # "abs_complex_modulus" or "complex_modulus"
    equation: str
    reference: str


MODELS: dict[str, ClosedFormModel] = {
    "sigmoid": ClosedFormModel(
        "sigmoid", ("delta", "alpha", "beta", "gamma"),
        ("log10 Pa", "decades", "1", "1"), "abs_complex_modulus",
        "log10|E*| = delta + alpha/(1 + exp(beta + gamma*log10(f_r/Hz)))",
        "Pellinen & Witczak 2002"),
    "havriliak_negami": ClosedFormModel(
        "havriliak_negami",
        ("relaxed_modulus_Pa", "relaxation_strength_Pa", "tau_s", "alpha", "beta"),
        ("Pa", "Pa", "s", "1", "1"), "complex_modulus",
        "E* = E_r + dE*(1 - (1 + (i*omega*tau)^alpha)^(-beta))",
        "Havriliak & Negami, Polymer 8:161, 1967"),
    "cole_cole": ClosedFormModel(
        "cole_cole", ("relaxed_modulus_Pa", "relaxation_strength_Pa", "tau_s", "alpha"),
        ("Pa", "Pa", "s", "1"), "complex_modulus",
        "E* = E_r + dE*(i*omega*tau)^alpha/(1 + (i*omega*tau)^alpha)",
        "Cole & Cole, J. Chem. Phys. 9:341, 1941"),
    "cole_davidson": ClosedFormModel(
        "cole_davidson", ("relaxed_modulus_Pa", "relaxation_strength_Pa", "tau_s", "beta"),
        ("Pa", "Pa", "s", "1"), "complex_modulus",
        "E* = E_r + dE*(1 - (1 + i*omega*tau)^(-beta))",
        "Davidson & Cole, J. Chem. Phys. 19:1484, 1951"),
}


# --------------------------------------------------------------------------- result
@dataclass(frozen=True, eq=False)
class ClosedFormFit(ResultContract):
    """Result of a closed-form model fit (frozen).

    Attributes
    ----------
    model : str
        Registry name (see :data:`MODELS`).
    params, stderr : mapping of str to float
        Fitted parameters (units in :data:`MODELS`) and their standard errors from the
        lmfit covariance (NaN when it could not be estimated).
    aic, bic : float
        Akaike and Bayesian information criteria from lmfit, on the residuals fitted
        (log10 modulus for the sigmoid, relative E', E'' for the others).
    rms_percent, max_percent : float
        rms and largest relative deviation (%) of the fitted quantities from the data.
    n_points : int
        Number of residuals.
    quantities : tuple of str
        Quantities fitted: ``("abs_complex_modulus",)`` or ``("storage_modulus", "loss_modulus")``.
    x : numpy.ndarray
        Reduced angular frequency of the data (rad/s).
    measured, fitted, residuals_percent : mapping of str to numpy.ndarray
        Per quantity.
    success : bool
        lmfit's convergence flag.
    message : str
        lmfit's message.
    reference : str
        Literature source of the model.
    notes : tuple of str
        Doubts about the fit (none are judged yet). Result contract: :mod:`ttsp.result_contract`.
    """

    model: str
    params: Mapping
    stderr: Mapping
    aic: float
    bic: float
    rms_percent: float
    max_percent: float
    n_points: int
    quantities: tuple
    x: np.ndarray
    measured: Mapping
    fitted: Mapping
    residuals_percent: Mapping
    success: bool
    message: str
    reference: str
    notes: tuple = ()

    @property
    def n_parameters(self) -> int:
        """Number of free parameters of the model."""
        return len(MODELS[self.model].parameters)

    # ------------------------------------------------------------------ evaluation
    def complex_modulus(self, omega_rad_s: ArrayLike):
        """E*(ω) (Pa, complex) for the Havriliak-Negami family; ω in rad/s.

        Raises
        ------
        DataError
            For the sigmoid model, which describes |E*| only.
        """
        if self.model == "sigmoid":
            raise bad_value("quantity", "|E*| for the sigmoid model (it describes the dynamic "
                            "modulus only)", "complex_modulus")
        w = _evaluation_argument("omega_rad_s", omega_rad_s)
        p = self._hn_params()
        out = np.asarray(havriliak_negami_modulus(w, *p))
        if np.ndim(omega_rad_s) == 0:
            return complex(out.reshape(()))
        return out

    def _hn_params(self):
        p = self.params
        return (p["relaxed_modulus_Pa"], p["relaxation_strength_Pa"], p["tau_s"],
                p.get("alpha", 1.0), p.get("beta", 1.0))

    def storage_modulus(self, omega_rad_s: ArrayLike):
        """E'(ω) (Pa); not for the sigmoid model."""
        return _scalar_or_array(np.asarray(self.complex_modulus(omega_rad_s)).real, omega_rad_s)

    def loss_modulus(self, omega_rad_s: ArrayLike):
        """E''(ω) (Pa); not for the sigmoid model."""
        return _scalar_or_array(np.asarray(self.complex_modulus(omega_rad_s)).imag, omega_rad_s)

    def tan_delta(self, omega_rad_s: ArrayLike):
        """tan δ = E''/E'; not for the sigmoid model."""
        z = np.asarray(self.complex_modulus(omega_rad_s))
        return _scalar_or_array(z.imag / z.real, omega_rad_s)

    def abs_complex_modulus(self, omega_rad_s: ArrayLike):
        """Dynamic modulus |E*(ω)| (Pa); ω in rad/s."""
        if self.model == "sigmoid":
            w = _evaluation_argument("omega_rad_s", omega_rad_s, allow_zero=False)
            p = self.params
            out = 10.0 ** sigmoid_log10_modulus(w, p["delta"], p["alpha"], p["beta"], p["gamma"])
            return _scalar_or_array(np.asarray(out), omega_rad_s)
        return _scalar_or_array(np.abs(np.asarray(self.complex_modulus(omega_rad_s))),
                                omega_rad_s)

    # ------------------------------------------------------------------ comparison/export
    def compare_with(self, *others: Any, names: tuple | None = None) -> FitComparison:
        """Compare this fit with others (e.g. a :class:`~ttsp.prony.PronyFit`) on this fit's data.

        Every model is evaluated on the quantities this fit was made to; see
        :func:`compare_models`.
        """
        models = {f"{self.model} (closed form)": self}
        for k, other in enumerate(others):
            label = names[k] if names is not None else _default_label(other, k)
            models[label] = other
        storage = self.measured.get("storage_modulus")
        loss = self.measured.get("loss_modulus")
        absm = self.measured.get("abs_complex_modulus")
        return compare_models(self.x, models, storage_modulus_Pa=storage, loss_modulus_Pa=loss,
                              abs_complex_modulus_Pa=absm)

    def to_dict(self) -> dict:
        """JSON-ready summary (no data arrays; see :meth:`to_frame`)."""
        return _plain({
            "model": self.model, "reference": self.reference,
            "equation": MODELS[self.model].equation,
            "params": dict(self.params),
            "stderr": _plain(dict(self.stderr), nonfinite_as_none=True),
            "units": dict(zip(MODELS[self.model].parameters, MODELS[self.model].units,
                               strict=True)),
            "aic": self.aic, "bic": self.bic, "rms_percent": self.rms_percent,
            "max_percent": self.max_percent, "n_points": self.n_points,
            "quantities": list(self.quantities), "success": self.success,
            "message": self.message, "notes": list(self.notes),
        })

    @classmethod
    def from_dict(cls, data: Mapping) -> ClosedFormFit:
        """Rebuild a fit from :meth:`to_dict` output; the data arrays come back empty."""
        quantities = tuple(data.get("quantities") or ())
        empty = frozen_map({q: np.empty(0) for q in quantities})
        return cls(model=check_choice("model", data["model"], tuple(MODELS)),
                   params=frozen_map({k: float(v) for k, v in data["params"].items()}),
                   stderr=frozen_map(none_as_nan(data.get("stderr"))),
                   aic=float(data["aic"]), bic=float(data["bic"]),
                   rms_percent=float(data["rms_percent"]), max_percent=float(data["max_percent"]),
                   n_points=int(data["n_points"]), quantities=quantities,
                   x=_readonly(np.empty(0)), measured=empty, fitted=empty,
                   residuals_percent=empty, success=bool(data["success"]),
                   message=str(data.get("message", "")),
                   reference=str(data.get("reference", MODELS[data["model"]].reference)),
                   notes=tuple(data.get("notes") or ()))

    def to_frame(self):
        """Tidy table of the fitted data.

        Columns: omega_rad_s, quantity, measured, fitted, residual_percent.
        """
        import pandas as pd

        return pd.concat([pd.DataFrame({"omega_rad_s": self.x, "quantity": q,
                                        "measured": self.measured[q], "fitted": self.fitted[q],
                                        "residual_percent": self.residuals_percent[q]})
                          for q in self.quantities], ignore_index=True)

    def _html_caption(self) -> str:
        return f"{self.model} fit ({MODELS[self.model].reference})"

    def _html_rows(self) -> list[tuple[str, str]]:
        m = MODELS[self.model]
        return [("equation", m.equation),
                ("units", ", ".join(f"{k}: {u}" for k, u in zip(m.parameters, m.units, strict=True))),
                ("fit", f"{self.n_points} residuals, rms {self.rms_percent:.3g} %, "
                        f"max {self.max_percent:.3g} %, AIC {self.aic:.4g}")]


def _default_label(other, k: int) -> str:
    if isinstance(other, PronyFit):
        return f"Prony ({other.n_terms} terms)"
    if isinstance(other, PronySeries):
        return f"Prony ({other.n_terms} terms)"
    if isinstance(other, ClosedFormFit):
        return f"{other.model} (closed form)"
    return f"model {k + 1}"


# --------------------------------------------------------------------------- fitting
def _stderr_of(par) -> float:
    """lmfit's standard error of a parameter, NaN when it could not be estimated."""
    return stderr_or_nan(par.stderr)


def _best_of(minimize: Callable, starts: list) -> Any:
    best = None
    for p in starts:
        try:
            out = minimize(p)
        except (ValueError, FloatingPointError):
            continue
        if not np.isfinite(out.chisqr):
            continue
        if best is None or out.chisqr < best.chisqr:
            best = out
    if best is None:
        raise FitError("the closed-form fit failed from every starting point")
    return best


def fit_sigmoid(omega_rad_s: ArrayLike, abs_complex_modulus_Pa: ArrayLike) -> ClosedFormFit:
    """Fit the sigmoidal model of the dynamic modulus (Pellinen & Witczak 2002).

    log10|E*| = δ + α/(1 + exp(β + γ log10 f_r)), f_r = ω_r/(2π) in Hz, fitted by least
    squares on log10|E*| with lmfit (Levenberg-Marquardt), α > 0 and γ < 0, from a few
    starting points; the best is kept.

    Parameters
    ----------
    omega_rad_s : array_like
        Reduced angular frequencies ω·a_T (rad/s), > 0; at least 5 points.
    abs_complex_modulus_Pa : array_like
        Measured |E*| (Pa), > 0.

    Returns
    -------
    ClosedFormFit
        ``params``: delta, alpha (log10 Pa / decades), beta, gamma.

    Raises
    ------
    DataError
        If an input breaks its rule.
    FitError
        If no start converges.
    """
    import lmfit

    w = positive_abscissa("omega_rad_s", omega_rad_s)
    y = measured_values("abs_complex_modulus_Pa", abs_complex_modulus_Pa, w.size, True)
    if w.size < 5:
        raise bad_value("omega_rad_s", "at least 5 points for a 4-parameter model",
                        f"{w.size} points")
    ly = np.log10(y)
    logf = np.log10(w / (2 * np.pi))
    span = max(float(ly.max() - ly.min()), 0.1)
    mid = float(np.median(logf))

    def residual(p):
        v = p.valuesdict()
        return sigmoid_log10_modulus(w, v["delta"], v["alpha"], v["beta"], v["gamma"]) - ly

    def minimize(g0):
        p = lmfit.Parameters()
        p.add("delta", value=float(ly.min()) - 0.1 * span)
        p.add("alpha", value=1.2 * span, min=1e-6)
        p.add("gamma", value=g0, max=-1e-9)
        p.add("beta", value=-g0 * mid)
        return lmfit.minimize(residual, p, method="leastsq")

    out = _best_of(minimize, [-0.3, -0.7, -1.5])
    v = out.params.valuesdict()
    params = {k: float(v[k]) for k in MODELS["sigmoid"].parameters}
    stderr = {k: _stderr_of(out.params[k]) for k in params}
    fitted = 10.0 ** sigmoid_log10_modulus(w, **params)
    return _make_fit("sigmoid", out, params, stderr, w, {"abs_complex_modulus": y},
                     {"abs_complex_modulus": fitted})


def fit_havriliak_negami(omega_rad_s: ArrayLike, storage_modulus_Pa: ArrayLike,
                         loss_modulus_Pa: ArrayLike, *,
                         model: str = "havriliak_negami") -> ClosedFormFit:
    """Fit a Havriliak-Negami-family complex modulus to E'(ω) and E''(ω).

    E* = E_r + ΔE[1 − (1 + (iωτ)^α)^(−β)] (Havriliak & Negami 1967), or its special cases
    Cole-Cole (β = 1) and Cole-Davidson (α = 1). E' and E'' residuals are stacked and
    relative (as in the Prony fit); lmfit (Levenberg-Marquardt) from several starting
    points, with E_r ≥ 0, ΔE > 0, 0 < α ≤ 1, 0 < αβ ≤ 1 (β = αβ/α).

    Parameters
    ----------
    omega_rad_s : array_like
        Reduced angular frequencies (rad/s), > 0; at least 3 points.
    storage_modulus_Pa, loss_modulus_Pa : array_like
        Measured E', E'' (Pa), > 0.
    model : {"havriliak_negami", "cole_cole", "cole_davidson"}
        Which member of the family.

    Returns
    -------
    ClosedFormFit
        ``params``: relaxed_modulus_Pa, relaxation_strength_Pa, tau_s, and alpha and/or beta.

    Raises
    ------
    DataError
        If an input breaks its rule.
    FitError
        If no start converges.
    """
    import lmfit

    check_choice("model", model, ("havriliak_negami", "cole_cole", "cole_davidson"))
    w = positive_abscissa("omega_rad_s", omega_rad_s)
    e1 = measured_values("storage_modulus_Pa", storage_modulus_Pa, w.size, True)
    e2 = measured_values("loss_modulus_Pa", loss_modulus_Pa, w.size, True)
    if w.size < 3:
        raise bad_value("omega_rad_s", "at least 3 points", f"{w.size} points")
    scale = float(max(e1.max(), e2.max()))
    y = np.concatenate([e1, e2])

    def model_of(v):
        return havriliak_negami_modulus(w, v["relaxed"] * scale, v["strength"] * scale,
                                        10.0 ** v["log10_tau"], v["alpha"], v["beta"])

    def residual(p):
        z = model_of(p.valuesdict())
        return np.concatenate([z.real, z.imag]) / y - 1.0

    tau0 = -math.log10(float(w[np.argmax(e2)]))
    lo = max(float(e1.min()) / scale * 0.9, 0.0)
    hi = float(e1.max()) / scale

    def minimize(start):
        a0, ab0, t_off = start
        p = lmfit.Parameters()
        p.add("relaxed", value=lo, min=0.0)
        p.add("strength", value=max(hi - lo, 1e-3), min=1e-12)
        p.add("log10_tau", value=tau0 + t_off)
        if model == "cole_davidson":
            p.add("alpha", value=1.0, vary=False)
            p.add("beta", value=ab0, min=1e-3, max=1.0)
        elif model == "cole_cole":
            p.add("alpha", value=a0, min=1e-3, max=1.0)
            p.add("beta", value=1.0, vary=False)
        else:
            p.add("alpha", value=a0, min=1e-3, max=1.0)
            p.add("alpha_beta", value=min(ab0, a0), min=1e-3, max=1.0)
            p.add("beta", expr="alpha_beta/alpha")
        return lmfit.minimize(residual, p, method="leastsq")

    out = _best_of(minimize, _hn_starts(model))
    params, stderr = _hn_params_and_stderr(out.params, model, scale)
    z = model_of(out.params.valuesdict())
    return _make_fit(model, out, params, stderr, w,
                     {"storage_modulus": e1, "loss_modulus": e2},
                     {"storage_modulus": z.real, "loss_modulus": z.imag})


def _hn_starts(model: str) -> list[tuple[float, float, float]]:
    """Starting points (α, αβ, offset of log10 τ from the E'' peak) for each family member."""
    if model == "havriliak_negami":
        return [(a, ab, t) for a in (0.4, 0.8) for ab in (0.3, 0.6) for t in (-0.5, 0.5)]
    if model == "cole_cole":
        return [(a, 0.0, t) for a in (0.3, 0.6, 0.9) for t in (-0.5, 0.5)]
    return [(1.0, b, t) for b in (0.3, 0.6, 0.9) for t in (-0.5, 0.5)]


def _hn_params_and_stderr(pv, model: str, scale: float) -> tuple[dict, dict]:
    """The fitted parameters in Pa and s (α and/or β as the member has them) and their
    standard errors, from the scaled lmfit parameters."""
    params = {"relaxed_modulus_Pa": float(pv["relaxed"].value) * scale,
              "relaxation_strength_Pa": float(pv["strength"].value) * scale,
              "tau_s": float(10.0 ** pv["log10_tau"].value)}
    stderr = {"relaxed_modulus_Pa": _stderr_of(pv["relaxed"]) * scale,
              "relaxation_strength_Pa": _stderr_of(pv["strength"]) * scale,
              # d tau = tau ln10 d log10 tau
              "tau_s": _stderr_of(pv["log10_tau"]) * params["tau_s"] * math.log(10)}
    if model != "cole_davidson":
        params["alpha"] = float(pv["alpha"].value)
        stderr["alpha"] = _stderr_of(pv["alpha"])
    if model != "cole_cole":
        params["beta"] = float(pv["beta"].value)
        stderr["beta"] = _stderr_of(pv["beta"])
    return params, stderr


def _make_fit(model, out, params, stderr, w, measured, fitted) -> ClosedFormFit:
    resid = {q: 100.0 * (fitted[q] / measured[q] - 1.0) for q in measured}
    allr = np.concatenate(list(resid.values()))
    return ClosedFormFit(
        model=model, params=frozen_map(params), stderr=frozen_map(stderr),
        aic=float(out.aic), bic=float(out.bic),
        rms_percent=float(np.sqrt(np.mean(allr ** 2))), max_percent=float(np.abs(allr).max()),
        n_points=int(allr.size), quantities=tuple(measured), x=_readonly(w),
        measured=frozen_map(measured), fitted=frozen_map(fitted),
        residuals_percent=frozen_map(resid), success=bool(out.success),
        message=str(out.message), reference=MODELS[model].reference)


def fit_closed_form(model: str, omega_rad_s: ArrayLike, *,
                    storage_modulus_Pa: ArrayLike | None = None,
                    loss_modulus_Pa: ArrayLike | None = None,
                    abs_complex_modulus_Pa: ArrayLike | None = None) -> ClosedFormFit:
    """Fit the registered closed-form ``model`` (see :data:`MODELS`) to frequency data.

    The sigmoid takes |E*| (computed as sqrt(E'² + E''²) when E' and E'' are given instead);
    the Havriliak-Negami family takes E' and E''.

    Raises
    ------
    DataError
        If ``model`` is unknown or the data it needs are missing.
    """
    check_choice("model", model, tuple(MODELS))
    if model == "sigmoid":
        if abs_complex_modulus_Pa is None:
            if storage_modulus_Pa is None or loss_modulus_Pa is None:
                raise bad_value("abs_complex_modulus_Pa", "given (or both storage_modulus_Pa "
                                "and loss_modulus_Pa) for the sigmoid model", None)
            abs_complex_modulus_Pa = np.hypot(np.asarray(storage_modulus_Pa, dtype=float),
                                              np.asarray(loss_modulus_Pa, dtype=float))
        return fit_sigmoid(omega_rad_s, abs_complex_modulus_Pa)
    if storage_modulus_Pa is None or loss_modulus_Pa is None:
        raise bad_value("storage_modulus_Pa and loss_modulus_Pa", f"given for the {model} model",
                        None)
    return fit_havriliak_negami(omega_rad_s, storage_modulus_Pa, loss_modulus_Pa, model=model)
