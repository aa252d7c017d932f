"""How far apart isotherms lie in a plane: the measure behind the simplicity checks and the
shifted-superposition check.

Each isotherm is compared with others at several temperature separations; every point is
measured to the other curve in units of the pair's combined noise and a small tolerance, and the
verdict reads the largest rms of these normalised distances.
"""

from __future__ import annotations

import math

import numpy as np

from .result import CheckResult, _grade

__all__ = ["SPREAD_WARN", "SPREAD_FAIL", "SPREAD_TOLERANCE_RAD", "SPREAD_TOLERANCE_LOG10",
           "MIN_PAIR_POINTS", "MIN_CLASS_POINTS"]


#: Spread of overlapping isotherms: the rms of their distances in units of the combined noise
#: and tolerance (below). For isotherms that superpose and whose noise is as estimated, the
#: normalised distances are at most about standard normal (rms ≤ 1; measured about 0.6 on
#: exact WLF campaigns with 2 % noise added, 0.2-0.3 without noise). The noise estimate from a
#: few third differences can be off by a factor up to about 2, so up to 2.5 passes; above 5 the
#: curves differ far beyond noise and tolerance, the signature of thermorheological complexity
#: (mechanisms with different temperature dependences: Ngai & Plazek, ch. 26 in Mark (ed.),
#: Physical Properties of Polymers Handbook, 2nd ed., 2007).
SPREAD_WARN = 2.5
SPREAD_FAIL = 5.0
#: Scatter between isotherms allowed beyond their noise, added in quadrature to the combined
#: noise of each pair: 1° in δ and 0.013 decade (3 %) in a modulus, about the reproducibility of
#: DMA between specimens [common practice, no source]. Without it, very clean data (three
#: significant figures) would fail on deviations no engineer would act on. With it, real asphalt
#: binders (shared/data/asphalt-binder-ptf, whose isotherms 12-70 K apart differ by 2.5-3.4° in
#: δ: mild complexity, as their provenance note says) warn, and clear complexity still fails.
SPREAD_TOLERANCE_RAD = 0.0175
SPREAD_TOLERANCE_LOG10 = 0.013
#: Fewest points of one isotherm inside its neighbour's range for a pair to count.
MIN_PAIR_POINTS = 2
#: Fewest points pooled over the pairs of one temperature separation for its rms to count.
MIN_CLASS_POINTS = 10


def _curve(x: np.ndarray, y: np.ndarray):
    """Finite (x, y) of one isotherm in measurement order (ascending ω or t), or None below 2."""
    ok = np.isfinite(x) & np.isfinite(y)
    x, y = np.asarray(x, dtype=float)[ok], np.asarray(y, dtype=float)[ok]
    return (x, y) if x.size >= 2 else None


#: largest (jobs x points x segments) computed as one array by :func:`_distances`
_DISTANCE_BATCH = 1_000_000


def _distances(jobs):
    """Normalised distances of a's points from the polyline of b, for points inside b's x-range,
    for every job ``(a, b, sx, sy)`` at once.

    Both coordinates are divided by their combined noise (``sx``, ``sy``: the root sum of
    squares of the two isotherms' noise), and each point of a is measured to the nearest point of
    the polyline through b's points in measurement order (the parametric curve x(ω), y(ω)).
    In these units the distance of a point from a curve it belongs to is about a standard normal
    deviate whatever the local slope, so a steep stretch (a plateau seen edge-on) is not taken for
    spread; this is the effective-variance idea of orthogonal fitting (Orear, Am. J. Phys. 50,
    912, 1982). Points whose nearest point is an end of the polyline, past that end, lie beyond
    the curve and are left out. Returns, per job, (normalised distances, ordinate offsets to the
    nearest point). The jobs are padded to a common size and computed as one array operation
    (many small pairs cost little more than one).
    """
    if not jobs:
        return []
    J = len(jobs)
    ma = max(a[0].size for a, _, _, _ in jobs)
    mb = max(b[0].size for _, b, _, _ in jobs)
    if J > 1 and J * ma * mb > _DISTANCE_BATCH:   # keep the work arrays small: in halves
        return _distances(jobs[:J // 2]) + _distances(jobs[J // 2:])
    xa, ya = np.full((J, ma), np.nan), np.full((J, ma), np.nan)
    xb, yb = np.full((J, mb), np.nan), np.full((J, mb), np.nan)
    sx, sy = np.empty((J, 1, 1)), np.empty((J, 1, 1))
    nb = np.empty(J, dtype=int)
    for k, (a, b, sxk, syk) in enumerate(jobs):
        xa[k, :a[0].size], ya[k, :a[0].size] = a
        xb[k, :b[0].size], yb[k, :b[0].size] = b
        sx[k], sy[k] = sxk, syk
        nb[k] = b[0].size
    with np.errstate(invalid="ignore"):
        inside = (xa >= np.nanmin(xb, axis=1)[:, None]) & (xa <= np.nanmax(xb, axis=1)[:, None])
    px, py = xa[:, :, None] / sx, ya[:, :, None] / sy              # (J, ma, 1)
    ax, ay = xb[:, None, :-1] / sx, yb[:, None, :-1] / sy          # (J, 1, mb - 1)
    dx, dy = np.diff(xb, axis=1)[:, None, :] / sx, np.diff(yb, axis=1)[:, None, :] / sy
    length2 = dx * dx + dy * dy
    with np.errstate(invalid="ignore", divide="ignore"):
        u = np.where(length2 > 0, ((px - ax) * dx + (py - ay) * dy) / length2, 0.0)
    last = nb - 2                                                  # each job's last segment
    beyond = np.zeros(u.shape, dtype=bool)
    beyond[:, :, 0] = u[:, :, 0] < 0.0
    rows = np.arange(J)
    beyond[rows, :, last] |= u[rows, :, last] > 1.0
    u = np.clip(u, 0.0, 1.0)
    cx, cy = ax + u * dx, ay + u * dy
    d2 = (px - cx) ** 2 + (py - cy) ** 2
    d2 = np.where(np.isfinite(d2), d2, np.inf)                     # padding: never the nearest
    best = np.argmin(d2, axis=2)                                   # (J, ma)
    jj, ii = np.indices(best.shape)
    use = inside & ~beyond[jj, ii, best]
    offset = (py[:, :, 0] - cy[jj, ii, best]) * sy[:, :, 0]
    dist = np.sqrt(d2[jj, ii, best])
    return [(dist[k][use[k]], offset[k][use[k]]) for k in range(J)]


def _pairwise_spread(temperatures_K, curves, sx, sy, tx, ty):
    """Spread of isotherms about each other, by how far apart in temperature they are.

    Each isotherm is compared with those 1, 2, 4, 8, ... places above it in temperature order,
    wherever their abscissa ranges overlap (see :func:`_distances`). The normalised distances
    are pooled per separation; the value is the largest pooled rms over the separations with at
    least :data:`MIN_CLASS_POINTS` points. Neighbours differ little even in a complex material,
    whose shape changes build up with temperature; distant pairs show them at full size, and the
    doubling keeps the work near n log n pairs instead of n²/2. ``curves`` holds (x, y) or None
    per isotherm in temperature order; ``sx`` and ``sy`` the noise of x and y per isotherm,
    ``tx`` and ``ty`` the tolerances added in quadrature to the combined noise of each pair.
    Returns (value, raw rms of that separation, pairs, classes).
    """
    pairs, classes = [], []
    n = len(curves)
    for d in (1 << p for p in range(max(1, (n - 1).bit_length()))):
        norms, raws = [], []
        todo, jobs = [], []
        for i in range(n - d):
            j = i + d
            a, b = curves[i], curves[j]
            if (a is None or b is None or a[0].max() < b[0].min()
                    or b[0].max() < a[0].min()):
                continue
            sxx = math.sqrt(sx[i] ** 2 + sx[j] ** 2 + tx ** 2)
            syy = math.sqrt(sy[i] ** 2 + sy[j] ** 2 + ty ** 2)
            todo.append((i, j))
            jobs += [(a, b, sxx, syy), (b, a, sxx, syy)]
        found = _distances(jobs)
        for m, (i, j) in enumerate(todo):
            (n_ab, r_ab), (n_ba, r_ba) = found[2 * m], found[2 * m + 1]
            if n_ab.size + n_ba.size < MIN_PAIR_POINTS:
                continue
            norm = np.concatenate([n_ab, n_ba])
            raw = np.concatenate([r_ab, r_ba])
            pairs.append({"temperature_low_C": temperatures_K[i] - 273.15,
                          "temperature_high_C": temperatures_K[j] - 273.15,
                          "points": int(norm.size),
                          "rms_normalised": float(np.sqrt(np.mean(norm ** 2))),
                          "rms": float(np.sqrt(np.mean(raw ** 2)))})
            norms.append(norm)
            raws.append(raw)
        if norms:
            norm, raw = np.concatenate(norms), np.concatenate(raws)
            classes.append({"places_apart": d, "pairs": len(norms), "points": int(norm.size),
                            "rms_normalised": float(np.sqrt(np.mean(norm ** 2))),
                            "rms": float(np.sqrt(np.mean(raw ** 2)))})
    if not classes:
        return math.nan, math.nan, pairs, classes
    counted = [c for c in classes if c["points"] >= MIN_CLASS_POINTS] or classes
    top = max(counted, key=lambda c: c["rms_normalised"])
    return top["rms_normalised"], top["rms"], pairs, classes


def _spread_result(name, plane, unit, value, raw, pairs, classes, advice_fail):
    """Grade an rms spread (multiples of noise and tolerance) and word the verdict."""
    threshold = SPREAD_WARN
    if not pairs:
        return CheckResult(name, "warn", None, threshold,
                           f"No two isotherms overlap in the {plane}, so superposition cannot be "
                           "judged there; measure at closer temperatures or over a wider range.",
                           {"pairs": [], "unit": "multiples of noise and tolerance",
                            "rms_spread_unit": unit})
    # the worst pair named in the message: among pairs with a few points, not a lone pair of two
    named = [p for p in pairs if p["points"] >= 2 * MIN_PAIR_POINTS] or pairs
    worst = max(named, key=lambda p: p["rms_normalised"])
    status = _grade(value, SPREAD_WARN, SPREAD_FAIL)
    which = f"{worst['temperature_low_C']:.4g} °C and {worst['temperature_high_C']:.4g} °C"
    size = f"{value:.2g} times what noise and a small tolerance allow; rms {raw:.2g} {unit}"
    if status == "pass":
        msg = (f"The isotherms fall on one curve in the {plane} (spread {size}); superposition "
               "is supported.")
    elif status == "warn":
        msg = (f"The isotherms scatter about each other in the {plane} (spread {size}; worst "
               f"between {which}). Superposition is doubtful there: compare the shifted "
               "curves before trusting the master curve.")
    else:
        msg = (f"The isotherms do not fall on one curve in the {plane} (spread {size}; worst "
               f"between {which}). {advice_fail}")
    return CheckResult(name, status, value, threshold, msg,
                       {"unit": "multiples of noise and tolerance", "rms_spread": raw,
                        "rms_spread_unit": unit,
                        "points_compared": int(sum(c["points"] for c in classes)),
                        "by_separation": classes,
                        "fail_threshold": SPREAD_FAIL, "worst_pair": [
                            worst["temperature_low_C"], worst["temperature_high_C"]],
                        "pairs": pairs})
