"""How far a trajectory lies from a reference path, and how far ahead or behind it runs.

Two different questions, answered separately (a difference of states at equal epochs mixes
them: a trajectory on the very path but a few minutes late near a fast perilune shows
thousands of km and m/s "apart"):

* the **path offset**: the distance from each sample to the nearest point of the reference
  path, timing aside;
* the **timing offset**: the sample's epoch minus the epoch of that nearest point (positive:
  the trajectory runs behind the reference).

The nearest point: the nearest reference sample (a k-d tree, scipy's ``cKDTree``), then the
closest point of the cubic Hermite interpolant through the reference positions and
velocities on the two intervals beside it (golden-section search on each; Hermite
interpolation: Hairer, Norsett & Wanner, *Solving ODEs I*, 2nd ed., 1993, sec. II.6; golden
section: Press et al., *Numerical Recipes*, 3rd ed., 2007, sec. 10.2). With reference samples
every few minutes the interpolant is good to metres, so the offset no longer depends on the
sampling as the nearest-sample distance did (tens of km at an NRHO perilune).
"""

from __future__ import annotations

import numpy as np

GOLDEN_ITERATIONS = 48          # bracket shrinks by 0.618^48 ~ 1e-10 of an interval


def _hermite(p0, v0, p1, v1, h, s):
    """Cubic Hermite position at fraction ``s`` (N,) of intervals of length ``h`` (N,)."""
    s = s[:, None]
    h = h[:, None]
    s2, s3 = s * s, s * s * s
    return ((2 * s3 - 3 * s2 + 1) * p0 + (s3 - 2 * s2 + s) * h * v0 + (-2 * s3 + 3 * s2) * p1
            + (s3 - s2) * h * v1)


def _closest_on_intervals(q, p0, v0, p1, v1, h):
    """Fraction in [0, 1] and distance of the point of each interval nearest to ``q``."""
    g = (np.sqrt(5.0) - 1.0) / 2.0
    a = np.zeros(q.shape[0])
    b = np.ones(q.shape[0])
    # the Hermite cubic in powers of s, relative to q, once (Horner's rule in the search: the
    # same polynomial as _hermite, a few array passes per evaluation instead of a dozen)
    hh = h[:, None]
    c0 = p0 - q
    c1 = hh * v0
    c2 = 3 * (p1 - p0) - hh * (2 * v0 + v1)
    c3 = 2 * (p0 - p1) + hh * (v0 + v1)

    def dist(s):
        s = s[:, None]
        d = ((c3 * s + c2) * s + c1) * s + c0
        return np.sqrt(np.einsum("ij,ij->i", d, d))
    c, d = b - g * (b - a), a + g * (b - a)
    fc, fd = dist(c), dist(d)
    for _ in range(GOLDEN_ITERATIONS):
        left = fc < fd
        b = np.where(left, d, b)
        a = np.where(left, a, c)
        c, d = b - g * (b - a), a + g * (b - a)
        fc, fd = dist(c), dist(d)
    s = 0.5 * (a + b)
    # the ends of the interval too (the search finds an interior minimum only)
    cand = np.stack([s, np.zeros_like(s), np.ones_like(s)])
    dd = np.stack([dist(x) for x in cand])
    k = np.argmin(dd, axis=0)
    return cand[k, np.arange(s.size)], dd[k, np.arange(s.size)]


NEIGHBOURS = 32                 # nearest reference samples looked at for one inside the window


def path_and_timing_offsets(t_s, pos_km, ref_t_s, ref_pos_km, ref_vel_kms, window_s=None):
    """Path offset (km) and timing offset (s) of samples against a reference path.

    Parameters
    ----------
    t_s : (N,)            epochs of the samples (any origin, seconds)
    pos_km : (N, 3)       sample positions
    ref_t_s : (M,)        increasing epochs of the reference samples (same origin)
    ref_pos_km, ref_vel_kms : (M, 3)   reference positions and velocities (the velocity the
                                      time derivative of the position, km/s)

    window_s : float, optional   only reference points within this time of the sample count
                                 (a periodic reference passes the same place every period:
                                 half a period keeps the timing offset to the same revolution)

    Returns
    -------
    (path_km (N,), timing_s (N,))   distance to the nearest point of the reference path, and
                                    the sample's epoch minus that point's epoch

    Raises
    ------
    ValueError
        Arrays of mismatched shapes.

    Examples
    --------
    >>> t = np.linspace(0.0, 10.0, 11)
    >>> ref = np.column_stack([t, 0 * t, 0 * t])
    >>> vel = np.tile([1.0, 0.0, 0.0], (11, 1))
    >>> path, timing = path_and_timing_offsets([5.0], [[4.0, 3.0, 0.0]], t, ref, vel)
    >>> round(float(path[0]), 9), round(float(timing[0]), 9)
    (3.0, 1.0)

    References
    ----------
    Fritsch, F. N. & Carlson, R. E., "Monotone piecewise cubic interpolation", SIAM Journal on
    Numerical Analysis 17, 238 (1980) (cubic Hermite pieces of the reference path).
    """
    from scipy.spatial import cKDTree  # lazy: heavy library (scipy)
    t = np.asarray(t_s, dtype=float)
    q = np.asarray(pos_km, dtype=float)
    rt = np.asarray(ref_t_s, dtype=float)
    rp = np.asarray(ref_pos_km, dtype=float)
    rv = np.asarray(ref_vel_kms, dtype=float)
    m = rt.size
    k = min(NEIGHBOURS, m)
    _, idx = cKDTree(rp).query(q, k=k)
    idx = idx.reshape(q.shape[0], k)
    if window_s is None:
        i = idx[:, 0]
    else:
        inside = np.abs(rt[idx] - t[:, None]) <= float(window_s)
        first = np.argmax(inside, axis=1)                  # nearest one inside the window
        i = np.where(inside.any(axis=1), idx[np.arange(q.shape[0]), first],
                     np.clip(np.searchsorted(rt, t), 0, m - 1))
    best_d = np.linalg.norm(rp[i] - q, axis=1)
    best_t = rt[i].copy()
    if m >= 2:
        for lo in (np.clip(i - 1, 0, m - 2), np.clip(i, 0, m - 2)):
            hi = lo + 1
            h = rt[hi] - rt[lo]
            ok = h > 0
            s, d = _closest_on_intervals(q, rp[lo], rv[lo], rp[hi], rv[hi], np.where(ok, h, 1.0))
            better = ok & (d < best_d)
            best_d = np.where(better, d, best_d)
            best_t = np.where(better, rt[lo] + s * h, best_t)
    return best_d, t - best_t
