"""Side-by-side quality of several models of the same frequency data: a Prony series, a
closed-form fit (:mod:`ttsp.closed_forms`) or any object that evaluates the moduli and says how
many parameters it has, ranked by rms deviation and by a uniform AIC/BIC."""

from __future__ import annotations

import html
import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from ._arrays import fmt_html as _fmt
from ._arrays import to_plain as _plain
from ._validation import bad_value
from .prony import PronyFit, PronySeries
from .prony.fit_result import frozen_map
from .prony.nnls import measured_values, positive_abscissa

__all__ = ["FitComparison", "compare_models"]


def _uniform_information(rel: np.ndarray, k: int) -> tuple[float, float]:
    """AIC and BIC from relative residuals (fractions): n ln(RSS/n) + 2k and + k ln n."""
    n = rel.size
    rss = float(np.sum(rel * rel))
    base = n * math.log(max(rss, 1e-300) / n)
    return base + 2 * k, base + k * math.log(n)


@dataclass(frozen=True, eq=False)
class FitComparison:
    """Side-by-side quality of several models on the same data (frozen).

    ``rows`` holds one dict per model: ``model``, ``n_parameters``, ``rms_percent``,
    ``max_percent``, per-quantity ``rms_percent_<quantity>``, and ``aic``/``bic`` computed
    uniformly from the relative residuals of every model (n ln(RSS/n) + 2k, + k ln n).
    """

    rows: tuple
    quantities: tuple
    n_points: int

    @property
    def best(self) -> str:
        """The model with the lowest AIC."""
        return min(self.rows, key=lambda r: r["aic"])["model"]

    def to_dict(self) -> dict:
        return _plain({"quantities": list(self.quantities), "n_points": self.n_points,
                       "rows": [dict(r) for r in self.rows], "best_by_aic": self.best})

    def to_frame(self):
        import pandas as pd

        return pd.DataFrame([dict(r) for r in self.rows])

    def _repr_html_(self) -> str:
        head = "".join(f"<th>{html.escape(k)}</th>" for k in self.rows[0])
        body = "".join("<tr>" + "".join(
            f"<td>{html.escape(v) if isinstance(v, str) else _fmt(v)}</td>" for v in r.values())
            + "</tr>" for r in self.rows)
        return (f"<div><b>Model comparison</b> on {self.n_points} residuals "
                f"({', '.join(self.quantities)}); best by AIC: {html.escape(self.best)}"
                f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table></div>")


def _count_parameters(model: Any) -> int:
    if isinstance(model, PronyFit):
        model = model.series
    if isinstance(model, PronySeries):
        return int(np.sum(model.modulus_Pa > 0)) + int(model.equilibrium_modulus_Pa > 0)
    n = getattr(model, "n_parameters", None)
    if n is None:
        raise bad_value("model", "a PronyFit, PronySeries, ClosedFormFit or an object with "
                        "n_parameters", type(model).__name__)
    return int(n)


def compare_models(omega_rad_s: ArrayLike, models: Mapping[str, Any], *,
                   storage_modulus_Pa: ArrayLike | None = None,
                   loss_modulus_Pa: ArrayLike | None = None,
                   abs_complex_modulus_Pa: ArrayLike | None = None) -> FitComparison:
    """Tabulate how well several models describe the same frequency data.

    Each model (a :class:`~ttsp.prony.PronyFit`, :class:`~ttsp.prony.PronySeries`,
    :class:`ClosedFormFit`, or any object with the evaluation methods and ``n_parameters``)
    is evaluated at ``omega_rad_s``. The ranking quantities are those given that every model
    can evaluate; if there are none but E' and E'' are given, |E*| = sqrt(E'² + E''²) is used
    (so a sigmoid, which has no E', E'', is compared on |E*|). On them, relative residuals
    give the rms and max deviation (%) and a uniform AIC/BIC (Akaike, IEEE Trans. Autom.
    Control 19:716, 1974; Schwarz, Ann. Stat. 6:461, 1978) with k the number of free
    parameters (for a Prony series, the non-zero coefficients). Each row also carries the rms
    of every given quantity the model can evaluate (``rms_percent_<quantity>``).

    Parameters
    ----------
    omega_rad_s : array_like
        Reduced angular frequencies (rad/s), > 0.
    models : mapping of str to model
        Label → model.
    storage_modulus_Pa, loss_modulus_Pa, abs_complex_modulus_Pa : array_like, optional
        Measured quantities (Pa), > 0; at least one.

    Returns
    -------
    FitComparison

    Raises
    ------
    DataError
        If no quantity is given, the models share no quantity they can evaluate, or the
        inputs break their rules.
    """
    w = positive_abscissa("omega_rad_s", omega_rad_s)
    data = _measured_quantities(w, storage_modulus_Pa, loss_modulus_Pa, abs_complex_modulus_Pa)
    if not isinstance(models, Mapping) or not models:
        raise bad_value("models", "a non-empty mapping of label to model", models)
    resolved = {str(label): (m.series if isinstance(m, PronyFit) else m)
                for label, m in models.items()}
    if "abs_complex_modulus" not in data and {"storage_modulus", "loss_modulus"} <= set(data):
        derived = np.hypot(data["storage_modulus"], data["loss_modulus"])
    else:
        derived = None
    preds = _predictions(resolved, w, list(data) + (["abs_complex_modulus"]
                                                    if derived is not None else []))
    common = [q for q in data if all(q in p for p in preds.values())]
    if not common and derived is not None and all("abs_complex_modulus" in p
                                                  for p in preds.values()):
        data["abs_complex_modulus"] = derived
        common = ["abs_complex_modulus"]
    if not common:
        raise bad_value("models", "able to evaluate a common quantity among "
                        + ", ".join(data), {k: sorted(v) for k, v in preds.items()})
    rows = [_comparison_row(label, model, preds[label], data, common)
            for label, model in resolved.items()]
    data = {q: data[q] for q in common}
    return FitComparison(rows=tuple(frozen_map(r) for r in rows), quantities=tuple(data),
                         n_points=int(w.size))


def _measured_quantities(w: np.ndarray, storage_modulus_Pa, loss_modulus_Pa,
                         abs_complex_modulus_Pa) -> dict[str, np.ndarray]:
    """The quantities given (Pa), checked; at least one."""
    data = {}
    for name, values in (("storage_modulus", storage_modulus_Pa),
                         ("loss_modulus", loss_modulus_Pa),
                         ("abs_complex_modulus", abs_complex_modulus_Pa)):
        if values is not None:
            data[name] = measured_values(f"{name}_Pa", values, w.size, True)
    if not data:
        raise bad_value("storage_modulus_Pa, loss_modulus_Pa or abs_complex_modulus_Pa",
                        "given (at least one)", None)
    return data


def _predictions(models: Mapping[str, Any], w: np.ndarray,
                 quantities: list[str]) -> dict[str, dict[str, np.ndarray]]:
    """Each model's values of each quantity it can evaluate at ω (Pa)."""
    preds: dict[str, dict[str, np.ndarray]] = {}
    for label, model in models.items():
        preds[label] = {}
        for q in quantities:
            try:
                preds[label][q] = np.asarray(getattr(model, q)(w), dtype=float)
            except (AttributeError, ValueError):
                continue
    return preds


def _comparison_row(label: str, model: Any, pred: dict[str, np.ndarray],
                    data: dict[str, np.ndarray], common: list[str]) -> dict:
    """One model's row: rms per quantity it evaluates, and rms, max, AIC, BIC on ``common``."""
    row: dict[str, Any] = {"model": label, "n_parameters": _count_parameters(model)}
    for q in data:
        if q in pred:
            r = pred[q] / data[q] - 1.0
            row[f"rms_percent_{q}"] = 100 * float(np.sqrt(np.mean(r * r)))
    rel = np.concatenate([pred[q] / data[q] - 1.0 for q in common])
    row["n_residuals"] = int(rel.size)
    row["rms_percent"] = 100 * float(np.sqrt(np.mean(rel * rel)))
    row["max_percent"] = 100 * float(np.max(np.abs(rel)))
    row["aic"], row["bic"] = _uniform_information(rel, row["n_parameters"])
    return row
