"""The result of a shift-law fit (:class:`ShiftLawFit`) and the standard error of its
prediction (:meth:`ShiftLawFit.band`; :func:`law_prediction_stderr` is the same for anything
shaped like a fit). The fit keeps the result contract of :mod:`ttsp.result_contract`."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..result_contract import ResultContract, none_as_nan, stderr_or_nan
from ._common import ZERO_CELSIUS_K
from .base import ShiftLaw

__all__ = ["ShiftLawFit", "law_prediction_stderr"]

#: the solver of the nonlinear laws, and of any law with bounds
LMFIT_METHOD = "lmfit.minimize, leastsq (Levenberg-Marquardt)"
#: the solver of the linear laws without bounds
DIRECT_METHOD = "weighted linear least squares, solved directly (numpy lstsq)"


def _fmt(value: float | None) -> str:
    return "nan" if value is None or not np.isfinite(value) else f"{value:.6g}"


def _plain(value: Any) -> Any:
    """Turn a number into a JSON-ready float (None for NaN or infinity)."""
    v = float(value)
    return v if np.isfinite(v) else None


@dataclass(frozen=True)
class ShiftLawFit(ResultContract):
    """Result of :func:`~ttsp.laws.fit_shift_law`: the fitted law, its uncertainties and the fit figures.

    Attributes
    ----------
    law : ShiftLaw
        The fitted law; its valid range is the temperature range of the data.
    params, stderr : dict of str to float
        Fitted constants and their standard errors (units as in the law's names). The
        standard errors come from the covariance matrix scaled by the reduced chi-square
        (lmfit's default), so they reflect the actual scatter even when the supplied shift
        stderr are only relative. A fixed parameter has stderr 0.0; NaN when it could not
        be estimated. A fitted Tg (``glass_transition_K``) sits at a kink of the law: its
        standard error from the local linearisation is optimistic; read it as a resolution
        of about the spacing of the data temperatures.
    correlation : dict of (str, str) to float
        Correlation coefficient of each pair of free parameters.
    residuals : numpy.ndarray
        Data minus fitted log10 a_T (decades), one per input point, in input order.
    temperature_K, log10_aT_data, log10_aT_stderr : numpy.ndarray
        The shift table as fitted (stderr is NaN where not given).
    chi_square, reduced_chi_square, aic, bic : float
        Weighted chi-square (sum of squared residuals / stderr^2; unweighted when no stderr),
        chi-square per degree of freedom, and AIC = n ln(chi2/n) + 2k,
        BIC = n ln(chi2/n) + k ln n (Akaike, IEEE Trans. Autom. Control 19, 716, 1974;
        Schwarz, Ann. Stat. 6, 461, 1978). chi2 is floored at a residual of 1e-9 decades
        per point so that exact data compare by parameter count.
    n_points, n_free : int
        Points used in the fit and free parameters. A row at the reference temperature
        with log10 a_T = 0 is satisfied by every law by construction; it carries no
        information and is not counted in n_points (its residual is still reported).
    fixed_parameters : tuple of str
        Parameters held fixed.
    derived, derived_stderr : dict of str to float
        Derived figures and their standard errors by propagation through the covariance
        matrix. WLF family: ``T_inf_K`` = T_ref - C2 and ``C1_times_C2_K`` (the VFT constant B),
        both unchanged by a change of reference temperature, and ``C1_over_C2_per_K``
        = -d log10 a_T/dT at T_ref. C1 and C2 are strongly and positively correlated
        (typically > 0.95), so their ratio is usually determined about as well as the better
        of the two and the product less well; quote the pair with its correlation.
        VFT: the equivalent ``C1`` and ``C2_K``.
    candidates : tuple of dict
        For ``model="auto"``: every law tried, with ``status``, ``n_free``, ``chi_square``,
        ``aic``, ``bic`` and ``delta_bic`` to the chosen one. Otherwise the one law fitted.
    reason : str
        One sentence saying why this law was chosen.
    success : bool, message : str, nfev : int, method : str
        Solver provenance: lmfit ``leastsq`` (Levenberg-Marquardt) for the nonlinear laws and
        for any law with bounds; a direct weighted linear least-squares solve (``nfev`` 0) for
        the Arrhenius and polynomial laws without bounds.
    weighting : str
        ``"covariance"`` (generalised least squares with the shifts' covariance), ``"stderr"``
        (each residual over its stderr) or ``"none"``.
    degrees_of_freedom : int
        Weighted residuals minus free parameters (at least 1, or the law is not fitted): the
        divisor of the reduced chi-square. A covariance with a gauge direction of zero variance
        counts one residual fewer than ``n_points``.
    notes : tuple of str
        Doubts about the fit (a parameter at a bound, uncertainties not estimable); each is
        also issued as a :class:`~ttsp.exceptions.FitQualityWarning`.

    The fit keeps the result contract (:mod:`ttsp.result_contract`): ``params``, ``stderr``,
    ``notes``, ``success``, ``message``, ``to_dict``/``from_dict``, ``params_frame``;
    ``to_frame`` is the per-point table.
    """

    law: ShiftLaw
    params: dict
    stderr: dict
    correlation: dict
    residuals: np.ndarray
    temperature_K: np.ndarray
    log10_aT_data: np.ndarray
    log10_aT_stderr: np.ndarray
    chi_square: float
    reduced_chi_square: float
    aic: float
    bic: float
    n_points: int
    n_free: int
    fixed_parameters: tuple
    derived: dict
    derived_stderr: dict
    candidates: tuple
    reason: str
    success: bool = True
    message: str = ""
    nfev: int = 0
    notes: tuple = ()
    method: str = field(default=LMFIT_METHOD)
    weighting: str = "stderr"
    degrees_of_freedom: int = 1

    @property
    def model(self) -> str:
        """Registry name of the fitted law."""
        return self.law.model

    def log10_aT(self, temperature_K: Any) -> Any:
        """log10 a_T of the fitted law; see :meth:`~ttsp.laws.ShiftLaw.log10_aT`."""
        return self.law._log10_aT(temperature_K, stacklevel=2)

    def activation_energy_kJ_per_mol(self, temperature_K: Any) -> Any:
        """Apparent activation energy (kJ/mol) of the fitted law; see :class:`~ttsp.laws.ShiftLaw`."""
        return self.law._activation_energy(temperature_K, stacklevel=2)

    def band(self, temperature_K: Any) -> np.ndarray | None:
        """Standard error (decades) of the fitted log10 a_T at ``temperature_K``, or None when
        it cannot be estimated; see :func:`law_prediction_stderr` (JCGM 100:2008, eq. 13)."""
        return law_prediction_stderr(self, temperature_K)

    def to_dict(self) -> dict:
        """JSON-ready summary: the law's keys plus stderr, statistics and the choice made."""
        out = self.law.to_dict()
        out["parameter_stderr"] = {k: _plain(v) for k, v in self.stderr.items()}
        out["fixed_parameters"] = list(self.fixed_parameters)
        out["correlation"] = [{"parameters": [a, b], "value": _plain(r)}
                              for (a, b), r in self.correlation.items()]
        out["derived"] = {k: _plain(v) for k, v in self.derived.items()}
        out["derived_stderr"] = {k: _plain(v) for k, v in self.derived_stderr.items()}
        out["statistics"] = {
            "n_points": int(self.n_points), "n_free": int(self.n_free),
            "chi_square": _plain(self.chi_square),
            "reduced_chi_square": _plain(self.reduced_chi_square),
            "degrees_of_freedom": int(self.degrees_of_freedom),
            "aic": _plain(self.aic), "bic": _plain(self.bic),
            "rms_residual_log10_aT": _plain(np.sqrt(np.mean(self.residuals ** 2))),
        }
        out["selection"] = {"candidates": [dict(c) for c in self.candidates],
                            "reason": self.reason}
        out["solver"] = {"method": self.method, "weighting": self.weighting,
                         "success": bool(self.success), "message": self.message,
                         "nfev": int(self.nfev)}
        out["notes"] = list(self.notes)
        return out

    @classmethod
    def from_dict(cls, data: dict) -> ShiftLawFit:
        """Rebuild a fit from :meth:`to_dict` output (or the ``shift_law`` of a summary).

        The law, its parameters, stderr (None read as NaN), correlation, derived figures,
        statistics, choice, solver and notes come back; the per-point arrays
        (``residuals``, ``temperature_K``, ``log10_aT_data``, ``log10_aT_stderr``) are not in
        the dict and come back empty.
        """
        law = ShiftLaw.from_dict(data)
        stats = data.get("statistics") or {}
        solver = data.get("solver") or {}
        selection = data.get("selection") or {}
        empty = np.empty(0)

        def number(key: str) -> float:
            return stderr_or_nan(stats.get(key))

        return cls(
            law=law, params=dict(law.params),
            stderr=none_as_nan(data.get("parameter_stderr")),
            correlation={tuple(c["parameters"]): stderr_or_nan(c["value"])
                         for c in data.get("correlation") or ()},
            residuals=empty, temperature_K=empty, log10_aT_data=empty, log10_aT_stderr=empty,
            chi_square=number("chi_square"), reduced_chi_square=number("reduced_chi_square"),
            aic=number("aic"), bic=number("bic"),
            n_points=int(stats.get("n_points", 0)), n_free=int(stats.get("n_free", 0)),
            fixed_parameters=tuple(data.get("fixed_parameters") or ()),
            derived=none_as_nan(data.get("derived")),
            derived_stderr=none_as_nan(data.get("derived_stderr")),
            candidates=tuple(dict(c) for c in selection.get("candidates") or ()),
            reason=str(selection.get("reason", "")),
            success=bool(solver.get("success", True)), message=str(solver.get("message", "")),
            nfev=int(solver.get("nfev", 0)), notes=tuple(data.get("notes") or ()),
            method=str(solver.get("method", LMFIT_METHOD)),
            weighting=str(solver.get("weighting", "stderr")),
            degrees_of_freedom=int(stats.get("degrees_of_freedom", 1)))

    def to_frame(self):
        """Tidy per-point table: temperature, data, stderr, fitted value and residual."""
        import pandas as pd

        fitted = self.log10_aT_data - self.residuals
        return pd.DataFrame({
            "temperature_K": self.temperature_K,
            "temperature_C": self.temperature_K - ZERO_CELSIUS_K,
            "log10_aT": self.log10_aT_data,
            "log10_aT_stderr": self.log10_aT_stderr,
            "log10_aT_fitted": fitted,
            "residual_log10_aT": self.residuals,
        })

    def _html_caption(self) -> str:
        return f"fitted {self.law.model} shift law"

    def _html_rows(self) -> list[tuple[str, str]]:
        law = self.law
        rows = [("model", law.model),
                ("reference temperature", f"{law.reference_temperature_K:.6g} K "
                                          f"({law.reference_temperature_C:.6g} °C)")]
        if self.fixed_parameters:
            rows.append(("fixed parameters", ", ".join(self.fixed_parameters)))
        for name, value in self.derived.items():
            rows.append((name, f"{value:.6g} ± {_fmt(self.derived_stderr.get(name))}"))
        rng = law.valid_temperature_range_K
        if rng is not None:
            rows.append(("valid range", f"{rng[0]:.6g}-{rng[1]:.6g} K"))
        rows += [("points / free parameters", f"{self.n_points} / {self.n_free}"),
                 ("chi-square (reduced)", f"{self.chi_square:.4g} ({self.reduced_chi_square:.4g})"),
                 ("AIC / BIC", f"{self.aic:.4g} / {self.bic:.4g}"),
                 ("why this law", self.reason)]
        return rows


def law_prediction_stderr(law_fit: Any, temperature_K: Any) -> np.ndarray | None:
    """Standard error of a fitted law's log10 a_T at ``temperature_K``, or None.

    First-order propagation of the parameter covariance, var f = J C Jᵀ, with the Jacobian J
    by central differences (steps of 10⁻³ standard errors) and C rebuilt from the parameter
    standard errors and their correlation coefficients (JCGM 100:2008, GUM, eq. 13).
    ``law_fit`` is a :class:`ShiftLawFit` or anything with its ``law``, ``stderr``,
    ``correlation`` and ``fixed_parameters``. None when no free parameter has a finite
    positive stderr, or when a step leaves the law's domain.
    """
    law = law_fit.law
    stderr = dict(law_fit.stderr)
    fixed = set(getattr(law_fit, "fixed_parameters", ()) or ())
    free = [n for n in law.params if n not in fixed and stderr.get(n) is not None
            and np.isfinite(stderr[n]) and stderr[n] > 0]
    if not free:
        return None
    s = np.array([float(stderr[n]) for n in free])
    cov = np.diag(s ** 2)
    for (a, b), r in dict(getattr(law_fit, "correlation", {}) or {}).items():
        if a in free and b in free and r is not None and np.isfinite(r):
            i, j = free.index(a), free.index(b)
            cov[i, j] = cov[j, i] = float(r) * s[i] * s[j]
    t = np.atleast_1d(np.asarray(temperature_K, dtype=float))
    jac = np.empty((t.size, len(free)))
    try:
        for k, name in enumerate(free):
            h = 1e-3 * s[k]
            vals = []
            for sign in (1.0, -1.0):
                p = dict(law.params)
                p[name] = p[name] + sign * h
                moved = type(law)(law.reference_temperature_K, p, None)
                vals.append(np.asarray(moved.log10_aT(t), dtype=float))
            jac[:, k] = (vals[0] - vals[1]) / (2.0 * h)
    except Exception:  # a step left the law's domain (e.g. C2 <= 0): no band rather than a wrong one
        return None
    var = np.einsum("ti,ij,tj->t", jac, cov, jac)
    return np.sqrt(np.clip(var, 0.0, None))
