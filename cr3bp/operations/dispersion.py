"""Insertion dispersion: the last maneuver's errors, correction maneuvers, and the state at insertion.

The nominal. A ballistic arc of the CR3BP from the state just after the last maneuver of a
transfer (time 0) to the insertion (time ``tf``): the coast along a stable manifold onto a
periodic orbit (:func:`manifold_insertion`), or the arc after the last maneuver of a computed
leg (:func:`after_last_maneuver`).

The errors (1-σ per axis of the rotating frame, Gaussian, independent; the error model of
:class:`cr3bp.operations.keeping.Errors`). The last maneuver is executed with the execution
error ``e = s_p |dv| n_1 + s_f n_2`` (proportional, magnitude and pointing together, and
fixed; common practice) and was planned from a navigated state: the true state at time 0 is
the nominal plus one navigation error plus ``e`` in the velocity. At each correction time
``t_k`` the spacecraft knows its state to the navigation error and plans the correction that,
to first order, brings its position at the insertion epoch back to the nominal's (fixed-time
position targeting, the usual trajectory-correction-maneuver law): with ``Phi = Phi(tf, t_k)``
of the nominal, ``dv = -(Phi_rv^-1 Phi_rr dr + dv_nav)``, i.e. ``dv = -K dx_nav`` with
``K = [Phi_rv^-1 Phi_rr, I]``; it is executed with its own execution error.

Two estimates, side by side:

- **Monte Carlo**: trials propagated in the full (nonlinear) CR3BP with the compiled batch
  integrator, the correction law above applied to each trial's navigated deviation from the
  nominal.
- **Linear covariance** (the covariance of the true dispersion carried by the nominal's state
  transition matrices and updated at each maneuver, after D. K. Geller, "Linear covariance
  techniques for orbital rendezvous analysis and autonomous onboard mission planning",
  J. Guidance, Control, and Dynamics 29(6), 2006, pp. 1404-1414; from memory). With ``P``
  the dispersion covariance before a correction, ``N`` the navigation covariance and
  ``G = [0; I]``: ``S = K (P + N) K^T`` is the planned correction's covariance,
  ``E = (s_p^2 tr S + s_f^2) I`` its execution error's, ``Cov(dx, dv) = -P K^T``, and
  ``P+ = P + G (S + E) G^T - P K^T G^T - G K P``; between maneuvers ``P <- Phi P Phi^T``.
  The mean magnitude of a correction is that of a zero-mean Gaussian vector of covariance
  ``S + E``, ``E|v| = 1/(2 sqrt(pi)) int_0^inf (1 - prod_i (1 + 2 s l_i)^-1/2) s^-3/2 ds``
  (``l_i`` its eigenvalues; from ``sqrt(a) = 1/(2 sqrt(pi)) int_0^inf (1 - e^-sa) s^-3/2 ds``).

The two agree for small errors (the check of ``tests/test_dispersion.py``); the Monte Carlo
also holds what the linear estimate cannot (nonlinear growth for large errors, the
proportional error's non-Gaussian product). Every Δv, distance and time belongs to the CR3BP.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .. import validate
from ..errors import InputError, NoSolutionError
from .keeping import Errors
from ..cautions import caution
from ..integrate import propagate, propagate_batch
from ..tubes.manifolds import manifold_starts
import json
from pathlib import Path

#: Integration tolerance of the nominal and the trials (relative and absolute).
RTOL = 1e-12
#: A correction closer than this to the insertion (fraction of the coast) is refused: its
#: position targeting is ill-conditioned (Phi_rv -> 0).
MIN_LEAD = 1e-3
#: Largest number of correction maneuvers.
MAX_CORRECTIONS = 20

MODEL_TEXT = ("circular restricted three-body model (rotating frame); fixed-time position targeting "
              "corrections; linear covariance after Geller 2006")


@dataclass(frozen=True)
class Nominal:
    """The ballistic arc from just after the last maneuver (t = 0) to the insertion (t = tf_tu).

    Parameters
    ----------
    system : System
        The system (dimensional).
    x0 : numpy.ndarray, shape (6,)
        State just after the last maneuver (nondimensional, rotating).
    tf_tu : float
        Coast to the insertion, TU.
    burn_mps : float
        The last maneuver's magnitude (scales its proportional error), m/s.
    label : str
        What the arc is, for outputs.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> em = system("earth-moon")
    >>> Nominal(em, np.zeros(6), 1.0, 20.0, "demo").to_dict()["last_maneuver_mps"]
    20.0

    References
    ----------
    Geller, D. K., "Linear covariance techniques for orbital rendezvous analysis and autonomous
    onboard mission planning", Journal of Guidance, Control, and Dynamics 29(6), 1404 (2006).
    """

    system: object
    x0: np.ndarray
    tf_tu: float
    burn_mps: float
    label: str

    def to_dict(self) -> dict:
        s = self.system
        return {"label": self.label, "state_after_last_maneuver": list(map(float, self.x0)),
                "coast_days": self.tf_tu * s.time_days, "last_maneuver_mps": self.burn_mps}


def manifold_insertion(orbit, phase_deg: float, coast_tu: float, burn_mps: float, *,
                       branch: str = "interior", step_km=None) -> Nominal:
    """The coast along ``orbit``'s stable manifold that reaches the orbit at ``phase_deg``.

    The manifold's step-off point there (:func:`cr3bp.tubes.manifolds.manifold_starts`), traced
    back ``coast_tu``: the last maneuver (of size ``burn_mps``) puts the spacecraft on the
    manifold at its start.

    Parameters
    ----------
    orbit : PeriodicOrbit
        Of a dimensional system.
    phase_deg : float
        Where on the orbit the manifold arrives, degrees of the period.
    coast_tu : float
        Coast from the last maneuver to the insertion, TU (positive).
    burn_mps : float
        The last maneuver's magnitude, m/s (0..100000).
    branch : {"interior", "exterior"}, optional
        The manifold's branch.
    step_km : float, optional
        The step-off distance (default of :mod:`cr3bp.tubes.manifolds`).

    Returns
    -------
    Nominal
        The arc.

    Raises
    ------
    InputError
        A non-positive coast, a burn out of range, a system without units.
    NoSolutionError
        The manifold traced back stops early (impact, escape).

    Examples
    --------
    >>> from cr3bp import orbit, system
    >>> nrho = orbit(system("earth-moon"), "halo L2 south resonance=9:2")   # doctest: +SKIP
    >>> nom = manifold_insertion(nrho, 0.0, 10 / nrho.system.time_days, 20.0)  # doctest: +SKIP

    References
    ----------
    Gómez, G., Koon, W. S., Lo, M. W., Marsden, J. E., Masdemont, J. & Ross, S. D., "Connecting
    orbits and invariant manifolds in the spatial restricted three-body problem", Nonlinearity 17,
    1571 (2004) (stable manifolds as insertion paths).
    """
    s = orbit.system
    s.require_dimensional("an insertion dispersion in km and m/s")
    coast_tu = validate.positive_number("coast (TU)", coast_tu)
    burn_mps = validate.number_in("last maneuver (m/s)", burn_mps, 0.0, 1e5)
    t_phase = (float(phase_deg) % 360.0) / 360.0 * float(orbit.period)
    _, _, _, starts, _, _, d_km = manifold_starts(orbit, "stable", branch, times=np.array([t_phase]),
                                                  step_km=step_km)
    arc = propagate(s, starts[0], -float(coast_tu), rtol=RTOL, atol=RTOL)
    if arc.status != "time":
        raise NoSolutionError(f"the stable manifold traced back {coast_tu * s.time_days:.4g} d from phase "
                              f"{phase_deg:g} deg stops early ({arc.status}); shorten the coast")
    label = (f"stable manifold ({branch}) onto the orbit at phase {float(phase_deg) % 360.0:g} deg, step-off "
             f"{d_km:g} km, coast {coast_tu * s.time_days:.4g} d")
    return Nominal(s, np.asarray(arc.states[-1], dtype=float).copy(), float(coast_tu), float(burn_mps), label)


def after_last_maneuver(leg) -> Nominal:
    """The arc of a computed leg from its last maneuver to its arrival.

    The segment of the leg (:class:`cr3bp.transfers.leg.Leg`) that starts at that maneuver, up to
    ``tof_arrival`` (else ``tof``).

    Parameters
    ----------
    leg : Leg
        A computed leg with at least one maneuver, of a dimensional system.

    Returns
    -------
    Nominal
        The arc.

    Raises
    ------
    InputError
        A system without units.
    NoSolutionError
        The leg has no maneuver or no ballistic arc after its last one.

    Examples
    --------
    >>> nom = after_last_maneuver(leg)          # doctest: +SKIP

    References
    ----------
    Geller, D. K., "Linear covariance techniques for orbital rendezvous analysis and autonomous
    onboard mission planning", Journal of Guidance, Control, and Dynamics 29(6), 1404 (2006).
    """
    s = leg.system
    s.require_dimensional("an insertion dispersion in km and m/s")
    if not leg.maneuvers:
        raise NoSolutionError("the leg has no maneuver")
    last = leg.maneuvers[-1]
    t_end = leg.tof if math.isnan(leg.tof_arrival) else leg.tof_arrival
    seg = [g for g in leg.segments if abs(g[0] - last.t) <= 1e-9 * max(1.0, abs(last.t)) and g[2] > 0]
    if not seg or t_end <= last.t:
        raise NoSolutionError("the leg has no ballistic arc after its last maneuver")
    return Nominal(s, np.asarray(seg[0][1], dtype=float).copy(), float(t_end - last.t), float(last.dv_mps),
                   f"last maneuver of the leg {leg.origin} -> {leg.target}, coast "
                   f"{(t_end - last.t) * s.time_days:.4g} d to arrival")


#: A route's maneuver this close to its end (days) is at the end: the insertion itself, not
#: the last maneuver before it.
END_SLACK_DAYS = 1e-9


def after_route_maneuver(route) -> Nominal:
    """The coast of a stitched route from its last maneuver before the end to the route's end
    (the insertion): ``route`` a :class:`cr3bp.transfers.stitch.StitchedRoute`, or the
    ``route.json`` payload of ``librate route --out`` (a dict with ``system`` and ``stitched``),
    or the path of that file. A maneuver at the route's very end (its insertion burn) is the
    arrival, not the dispersed maneuver: the one before it is.

    Parameters
    ----------
    route : StitchedRoute, dict, str or path-like
        The stitched route, the payload of its ``route.json``, or the path of that file
        (read by :func:`read_route`).

    Returns
    -------
    Nominal
        The coast from just after the last maneuver before the end (its state after the
        maneuver, rotating and nondimensional) to the route's end, with that maneuver's
        magnitude (m/s) and a label naming the maneuver, its node, day and the route.

    Raises
    ------
    InputError        a file that is not a stitched route, or one written before the routes
                      carried the state after each maneuver; a non-dimensional system
    NoSolutionError   no maneuver with a coast after it

    Examples
    --------
    >>> nom = after_route_maneuver("out/route.json")          # doctest: +SKIP
    >>> nom.tf_tu * nom.system.time_days                      # doctest: +SKIP

    References
    ----------
    Geller, D. K., "Linear covariance techniques for orbital rendezvous analysis and autonomous
    onboard mission planning", Journal of Guidance, Control, and Dynamics 29(6) (2006) (the
    dispersion carried from the last maneuver to the end of the coast).
    """
    if isinstance(route, (str, bytes)) or hasattr(route, "__fspath__"):
        route = read_route(route)
    if isinstance(route, dict):
        from ..transfers.graph import system_from_spec  # lazy: heavy library (networkx, via cr3bp.transfers.graph)
        if route.get("stitched") is None:
            raise InputError("the route was not stitched; rerun librate route without --no-stitch")
        try:
            s = system_from_spec(route["system"])
            st = route["stitched"]
            mans, tof_days, nodes = list(st["maneuvers"]), float(st["tof_days"]), list(st["nodes"])
        except (KeyError, TypeError, ValueError) as e:
            raise InputError(f"the route has no stitched trajectory ({type(e).__name__}: {e})") from None
    else:
        s, mans, tof_days, nodes = route.system, list(route.maneuvers), float(route.tof_days), list(route.nodes)
    s.require_dimensional("an insertion dispersion in km and m/s")
    before = [m for m in mans if float(m["t_days"]) < tof_days - END_SLACK_DAYS]
    if not before:
        raise NoSolutionError("the route has no maneuver before its end")
    last = before[-1]
    if "state_after_lu" not in last:
        raise InputError("the route file does not hold the state after each maneuver (written by an older "
                         "librate); rerun librate route --out")
    x0 = np.asarray(last["state_after_lu"], dtype=float)
    if x0.shape != (6,) or not np.all(np.isfinite(x0)):
        raise InputError("the route's state after its last maneuver is not six finite numbers")
    coast_days = tof_days - float(last["t_days"])
    name = last.get("name") or "maneuver"
    ends = [m for m in mans if float(m["t_days"]) >= tof_days - END_SLACK_DAYS]
    tail = (f"; the insertion burn there ({float(ends[-1]['dv_mps']):.4g} m/s) is not dispersed" if ends else "")
    return Nominal(s, x0, coast_days / s.time_days, float(last["dv_mps"]),
                   f"{name} at {last.get('node', '?')} (day {float(last['t_days']):.4g}) of the route "
                   f"{' -> '.join(map(str, nodes))}, coast {coast_days:.4g} d to its end{tail}")


def read_route(path) -> dict:
    """The ``route.json`` of ``librate route --out`` (InputError naming the file otherwise).

    Parameters
    ----------
    path : str or path-like
        The file.

    Returns
    -------
    dict
        The file's JSON object; it holds ``system`` and a ``stitched`` route (not None).

    Raises
    ------
    InputError
        A missing file, a file that is not readable JSON, or JSON without a stitched route.

    Examples
    --------
    >>> read_route("no-such-route.json")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: route file 'no-such-route.json' does not exist

    References
    ----------
    ECMA-404, "The JSON Data Interchange Syntax", 2nd ed. (2017) (the file's format).
    """
    p = Path(path)
    if not p.is_file():
        raise InputError(f"route file '{path}' does not exist")
    try:
        d = json.loads(p.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, ValueError, RecursionError) as e:
        raise InputError(f"route file '{path}' is not readable JSON ({type(e).__name__})") from None
    if not isinstance(d, dict) or "stitched" not in d or "system" not in d:
        raise InputError(f"route file '{path}' is not a route.json of librate route --out (no 'stitched' route)")
    if d["stitched"] is None:
        raise InputError(f"route file '{path}': the route was not stitched")
    return d


# ---- linear covariance ------------------------------------------------------------------------

def mean_norm(cov: np.ndarray) -> float:
    """E|v| of a zero-mean Gaussian vector of covariance ``cov`` (module notes).

    Parameters
    ----------
    cov : numpy.ndarray, shape (n, n)
        Symmetric positive semi-definite covariance.

    Returns
    -------
    float
        The mean of the vector's length.

    Raises
    ------
    numpy.linalg.LinAlgError
        A covariance whose eigenvalues cannot be computed.

    Examples
    --------
    >>> round(mean_norm(np.eye(3)), 9)                 # Maxwell: 2 sqrt(2 / pi)
    1.595769122

    References
    ----------
    Papoulis, A. & Pillai, S. U., "Probability, Random Variables and Stochastic Processes",
    4th ed., McGraw-Hill (2002), sec. 6-3 (the Maxwell distribution; common practice).
    """
    from scipy.integrate import quad  # lazy: heavy library (scipy)
    lam = np.clip(np.linalg.eigvalsh(0.5 * (cov + cov.T)), 0.0, None)
    scale = lam.max()
    if scale <= 0.0:
        return 0.0
    l = lam / scale

    def f(u):                          # s = u^2 / (1 - u)^2 maps [0, 1) onto [0, inf)
        s = (u / (1.0 - u)) ** 2
        ds = 2.0 * u / (1.0 - u) ** 3
        return (1.0 - np.prod(1.0 / np.sqrt(1.0 + 2.0 * s * l))) * s ** -1.5 * ds

    val, _ = quad(f, 0.0, 1.0, limit=200, epsabs=0.0, epsrel=1e-10)
    return float(val / (2.0 * math.sqrt(math.pi)) * math.sqrt(scale))


def _nominal(nom: Nominal, times: np.ndarray):
    """Nominal states at ``times`` (from the same batch integrator as the trials) and the STMs
    Phi(times[k+1], times[k])."""
    X = np.empty((times.size, 6))
    X[0] = nom.x0
    phis = []
    for k in range(times.size - 1):
        dt = times[k + 1] - times[k]
        X[k + 1] = propagate_batch(nom.system, X[k:k + 1], dt, rtol=RTOL, atol=RTOL).states[0]
        phis.append(propagate(nom.system, X[k], dt, stm=True, rtol=RTOL, atol=RTOL).stm)
    return X, phis


def _sigmas(nom: Nominal, errors: Errors):
    s = nom.system
    vu_mps = s.velocity_kms * 1000.0
    nav = np.array([errors.nav_position_km / s.length_km] * 3 + [errors.nav_velocity_mps / vu_mps] * 3)
    return nav, errors.burn_proportional, errors.burn_fixed_mps / vu_mps, nom.burn_mps / vu_mps


def linear_covariance(nom: Nominal, corrections_tu, errors: Errors) -> dict:
    """The linear covariance estimate (module notes), nondimensional.

    Parameters
    ----------
    nom : Nominal
        The arc.
    corrections_tu : array_like, shape (k,)
        Correction times after the last maneuver, TU.
    errors : Errors
        The error model.

    Returns
    -------
    dict
        ``{"gains": (k, 3, 6), "dv_cov": (k, 3, 3)`` executed corrections, ``"P": (k + 2, 6, 6)``
        dispersion covariance at time 0 (after the last maneuver), before each correction and at
        the insertion, ``"P_uncorrected": (6, 6)`` at the insertion without corrections,
        ``"times", "states"}``.

    Raises
    ------
    NoSolutionError
        The nominal cannot be propagated to the insertion.

    Examples
    --------
    >>> lin = linear_covariance(nom, [0.5], Errors(1.0, 0.01, 0.01, 0.001))   # doctest: +SKIP

    References
    ----------
    Geller, D. K., "Linear covariance techniques for orbital rendezvous analysis and autonomous
    onboard mission planning", Journal of Guidance, Control, and Dynamics 29(6), 1404 (2006)
    (from memory).
    """
    times = np.concatenate([[0.0], np.asarray(corrections_tu, dtype=float), [nom.tf_tu]])
    X, phis = _nominal(nom, times)
    nav, s_p, s_f, burn = _sigmas(nom, errors)
    N = np.diag(nav ** 2)
    G = np.vstack([np.zeros((3, 3)), np.eye(3)])
    P = N + ((s_p * burn) ** 2 + s_f ** 2) * (G @ G.T)
    whole = np.eye(6)
    for phi in phis:
        whole = phi @ whole
    P_unc = whole @ P @ whole.T
    Ps, gains, dv_cov = [P.copy()], [], []
    for k in range(1, times.size - 1):
        P = phis[k - 1] @ P @ phis[k - 1].T
        Ps.append(P.copy())
        to_end = np.eye(6)
        for phi in phis[k:]:
            to_end = phi @ to_end
        prr, prv = to_end[:3, :3], to_end[:3, 3:]
        K = np.hstack([np.linalg.solve(prv, prr), np.eye(3)])
        S = K @ (P + N) @ K.T
        E = (s_p ** 2 * np.trace(S) + s_f ** 2) * np.eye(3)
        C = -P @ K.T
        P = P + G @ (S + E) @ G.T + C @ G.T + G @ C.T
        gains.append(K)
        dv_cov.append(S + E)
    P = phis[-1] @ P @ phis[-1].T
    Ps.append(P)
    return {"times": times, "states": X, "gains": np.array(gains).reshape(-1, 3, 6),
            "dv_cov": np.array(dv_cov).reshape(-1, 3, 3), "P": np.array(Ps), "P_uncorrected": P_unc}


# ---- Monte Carlo ------------------------------------------------------------------------------

def monte_carlo(nom: Nominal, corrections_tu, errors: Errors, trials: int, seed: int, lin: dict,
                runner=None) -> dict:
    """The Monte Carlo trials (module notes), nondimensional.

    Parameters
    ----------
    nom : Nominal
        The arc.
    corrections_tu : array_like, shape (k,)
        Correction times after the last maneuver, TU.
    errors : Errors
        The error model.
    trials : int
        Number of trials.
    seed : int
        The run's seed.
    lin : dict
        :func:`linear_covariance` of the same arc (its gains and nominal states are reused).
    runner : callable(function, tasks) -> list, optional
        Runs the trials in pieces of :data:`PIECE_TRIALS` consecutive trials elsewhere
        (``cr3bp.transfers.tasks.run_tasks`` bound to a pool or a dask cluster,
        :func:`trials_piece`). Every draw is made here first, from the one seed, and every
        trial is integrated on its own, so the result is the same bit for bit.

    Returns
    -------
    dict
        ``dv`` (n, k, 3) executed corrections, ``final`` (n, 6) true deviation from the nominal
        at the insertion, ``lost`` (n,) bool (the integrator stopped: impact or step limit).

    Raises
    ------
    ValueError
        A ``lin`` not made for these correction times.

    Examples
    --------
    >>> mc = monte_carlo(nom, [0.5], errors, 200, 1, lin)      # doctest: +SKIP

    References
    ----------
    Geller, D. K., "Linear covariance techniques for orbital rendezvous analysis and autonomous
    onboard mission planning", Journal of Guidance, Control, and Dynamics 29(6), 1404 (2006)
    (the Monte Carlo it is compared with).
    """
    times, X_nom, gains = lin["times"], lin["states"], lin["gains"]
    k = times.size - 2
    nav, s_p, s_f, burn = _sigmas(nom, errors)
    rng = np.random.default_rng(np.random.SeedSequence(int(seed)))
    z = rng.standard_normal((trials, 12 + 12 * k))
    X = np.repeat(nom.x0[None, :], trials, axis=0) + z[:, :6] * nav
    X[:, 3:] += s_p * burn * z[:, 6:9] + s_f * z[:, 9:12]
    task = {"system": nom.system, "times": times, "X_nom": X_nom, "gains": gains, "nav": nav, "s_p": s_p,
            "s_f": s_f}
    if runner is None:
        return trials_piece(dict(task, X=X, z=z))
    parts = runner(trials_piece, [dict(task, X=np.ascontiguousarray(X[a:a + PIECE_TRIALS]),
                                       z=np.ascontiguousarray(z[a:a + PIECE_TRIALS]))
                                  for a in range(0, trials, PIECE_TRIALS)])
    return {key: np.concatenate([p[key] for p in parts]) for key in ("dv", "final", "lost")}


#: Trials per piece of a Monte Carlo run elsewhere (the runner groups pieces in chunks).
PIECE_TRIALS = 64


def trials_piece(task: dict) -> dict:
    """Trials of :func:`monte_carlo` from their drawn starts (the worker function of a Monte
    Carlo in pieces): each trial propagated to each correction, corrected with the linear
    gains from its navigated state, and on to the insertion.

    Parameters
    ----------
    task : dict
        ``system``; ``X`` (n, 6) dispersed states after the last maneuver; ``z`` (n, 12 + 12k)
        their standard normal draws; ``times``, ``X_nom``, ``gains`` of
        :func:`linear_covariance`; ``nav`` (6,), ``s_p``, ``s_f`` the error sigmas
        (nondimensional).

    Returns
    -------
    dict
        ``dv``, ``final``, ``lost`` of these trials, as :func:`monte_carlo`.

    Raises
    ------
    ValueError
        Arrays of mismatched shapes.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.operations.dispersion import trials_piece
    >>> x = np.array([[0.8369, 0.0, 0.0, 0.0, 0.0, 0.0]])
    >>> out = trials_piece({"system": system("earth-moon"), "X": x, "z": np.zeros((1, 12)),
    ...                     "times": np.array([0.0, 0.1]), "X_nom": np.vstack([x, x]),
    ...                     "gains": np.zeros((0, 3, 6)), "nav": np.zeros(6), "s_p": 0.0, "s_f": 0.0})
    >>> out["dv"].shape, out["final"].shape, bool(out["lost"][0])
    ((1, 0, 3), (1, 6), False)

    References
    ----------
    Geller, D. K., "Linear covariance techniques for orbital rendezvous analysis and autonomous
    onboard mission planning", Journal of Guidance, Control, and Dynamics 29(6), 1404 (2006)
    (the Monte Carlo it is compared with).
    """
    system, times, X_nom, gains = task["system"], task["times"], task["X_nom"], task["gains"]
    nav, s_p, s_f, X, z = task["nav"], task["s_p"], task["s_f"], task["X"], task["z"]
    k = times.size - 2
    trials = X.shape[0]
    lost = np.zeros(trials, dtype=bool)
    dv_out = np.zeros((trials, k, 3))
    for j in range(k + 1):
        dt = times[j + 1] - times[j]
        res = propagate_batch(system, X, dt, rtol=RTOL, atol=RTOL, on_failure="mark")
        X = res.states.copy()
        lost |= np.asarray(res.status) != "time"
        if j == k:
            break
        zj = z[:, 12 + 12 * j: 24 + 12 * j]
        d = X + zj[:, :6] * nav - X_nom[j + 1]
        dv = -(d @ gains[j].T)
        mag = np.sqrt(np.sum(dv * dv, axis=1))
        ex = dv + s_p * mag[:, None] * zj[:, 6:9] + s_f * zj[:, 9:12]
        ex[lost] = 0.0
        X[:, 3:] += ex
        dv_out[:, j] = ex
    return {"dv": dv_out, "final": X - X_nom[-1], "lost": lost}


# ---- the result -------------------------------------------------------------------------------

@dataclass(frozen=True)
class Dispersion:
    """Insertion dispersion: the Monte Carlo and the linear covariance estimate (CR3BP).

    Parameters
    ----------
    nominal : Nominal
        The arc.
    corrections_tu : numpy.ndarray, shape (k,)
        Correction times from the last maneuver, TU.
    errors : Errors
        The error model.
    trials, seed : int
        The Monte Carlo's size and seed.
    linear : dict
        :func:`linear_covariance`.
    mc : dict
        :func:`monte_carlo`.

    Examples
    --------
    >>> d = dispersion(nom, [0.5], Errors(1.0, 0.01, 0.01, 0.001), 500)   # doctest: +SKIP
    >>> d.summary()                                                        # doctest: +SKIP

    References
    ----------
    Geller, D. K., "Linear covariance techniques for orbital rendezvous analysis and autonomous
    onboard mission planning", Journal of Guidance, Control, and Dynamics 29(6), 1404 (2006).
    """

    nominal: Nominal
    corrections_tu: np.ndarray
    errors: Errors
    trials: int
    seed: int
    linear: dict
    mc: dict

    @property
    def system(self):
        return self.nominal.system

    def summary(self) -> dict:
        s = self.system
        vu = s.velocity_kms * 1000.0
        lu = s.length_km
        keep = ~self.mc["lost"]
        dv = np.linalg.norm(self.mc["dv"][keep], axis=2) * vu          # (n, k) m/s
        tot = dv.sum(axis=1) if dv.size else np.zeros(int(keep.sum()))
        fin = self.mc["final"][keep]
        P = self.linear["P"][-1]
        per = []
        for j, t in enumerate(self.corrections_tu):
            cov = self.linear["dv_cov"][j]
            per.append({"time_days": float(t * s.time_days),
                        "monte_carlo_mean_mps": float(dv[:, j].mean()) if dv.size else 0.0,
                        "monte_carlo_p95_mps": float(np.percentile(dv[:, j], 95)) if dv.size else 0.0,
                        "monte_carlo_rms_mps": float(np.sqrt(np.mean(dv[:, j] ** 2))) if dv.size else 0.0,
                        "linear_mean_mps": mean_norm(cov) * vu,
                        "linear_rms_mps": float(np.sqrt(max(np.trace(cov), 0.0))) * vu})
        pos_mc = np.linalg.norm(fin[:, :3], axis=1) * lu
        vel_mc = np.linalg.norm(fin[:, 3:], axis=1) * vu

        def rss(c):
            return float(np.sqrt(max(np.trace(c), 0.0)))

        cov_mc = np.cov(fin.T, bias=True) if fin.shape[0] > 1 else np.zeros((6, 6))
        unc = self.linear["P_uncorrected"]
        return {
            "trials": self.trials, "lost_trials": int(self.mc["lost"].sum()),
            "corrections": per,
            "total_correction_mps": {
                "monte_carlo_mean": float(tot.mean()) if tot.size else 0.0,
                "monte_carlo_p95": float(np.percentile(tot, 95)) if tot.size else 0.0,
                "linear_mean": float(sum(c["linear_mean_mps"] for c in per))},
            "insertion_position_km": {
                "monte_carlo_rss_1sigma": rss(cov_mc[:3, :3]) * lu,
                "monte_carlo_p95": float(np.percentile(pos_mc, 95)) if pos_mc.size else 0.0,
                "linear_rss_1sigma": rss(P[:3, :3]) * lu,
                "linear_rss_1sigma_without_corrections": rss(unc[:3, :3]) * lu,
                "monte_carlo_sigma_xyz": (np.sqrt(np.diag(cov_mc)[:3]) * lu).tolist(),
                "linear_sigma_xyz": (np.sqrt(np.clip(np.diag(P)[:3], 0, None)) * lu).tolist()},
            "insertion_velocity_mps": {
                "monte_carlo_rss_1sigma": rss(cov_mc[3:, 3:]) * vu,
                "monte_carlo_p95": float(np.percentile(vel_mc, 95)) if vel_mc.size else 0.0,
                "linear_rss_1sigma": rss(P[3:, 3:]) * vu,
                "linear_rss_1sigma_without_corrections": rss(unc[3:, 3:]) * vu},
        }

    def to_dict(self) -> dict:
        return {"model": MODEL_TEXT, "nominal": self.nominal.to_dict(),
                "correction_days": (self.corrections_tu * self.system.time_days).tolist(),
                "errors": dict(self.errors.to_dict(), sigma="1-sigma per axis (rotating frame), Gaussian"),
                "seed": self.seed, "summary": self.summary(), "caution": caution("cr3bp")}


def dispersion(nom: Nominal, corrections_tu, errors: Errors, trials: int, seed: int = 0,
               runner=None) -> Dispersion:
    """Insertion dispersion of ``nom`` with corrections under ``errors`` (module notes).

    Parameters
    ----------
    nom : Nominal
        The arc.
    corrections_tu : array_like
        Correction times, TU after the last maneuver; strictly inside the coast, increasing; at
        most :data:`MAX_CORRECTIONS`.
    errors : Errors
        The error model.
    trials : int
        Monte Carlo trials, 1..1000000.
    seed : int, optional
        The run's seed.
    runner : callable(function, tasks) -> list, optional
        Runs the Monte Carlo's trials in pieces elsewhere (:func:`monte_carlo`); the same result
        bit for bit.

    Returns
    -------
    Dispersion
        Both estimates, side by side.

    Raises
    ------
    InputError
        Errors not an :class:`Errors`, trials out of range, bad correction times.
    NoSolutionError
        The nominal cannot be propagated.

    Examples
    --------
    >>> from cr3bp import orbit, system
    >>> nrho = orbit(system("earth-moon"), "halo L2 south resonance=9:2")     # doctest: +SKIP
    >>> nom = manifold_insertion(nrho, 0.0, 10 / nrho.system.time_days, 20.0)  # doctest: +SKIP
    >>> d = dispersion(nom, [1 / nrho.system.time_days], Errors(1.0, 0.01, 0.01, 0.001), 500)  # doctest: +SKIP

    References
    ----------
    Geller, D. K., "Linear covariance techniques for orbital rendezvous analysis and autonomous
    onboard mission planning", Journal of Guidance, Control, and Dynamics 29(6), 1404 (2006)
    (from memory).
    """
    if not isinstance(errors, Errors):
        raise InputError("errors must be an Errors")
    n = validate.whole_number("trials", trials, 1, 1_000_000)
    s = nom.system
    c = np.atleast_1d(np.asarray(corrections_tu, dtype=float))
    if c.size > MAX_CORRECTIONS:
        raise InputError(f"{c.size} corrections; at most {MAX_CORRECTIONS}")
    c = np.array([validate.finite_number("correction time (TU)", v) for v in c], dtype=float)
    if np.any(np.diff(c) <= 0):
        raise InputError("correction times must be increasing")
    lo, hi = 0.0, nom.tf_tu * (1.0 - MIN_LEAD)
    bad = c[(c <= lo) | (c > hi)]
    if bad.size:
        raise InputError(f"correction at {bad[0] * s.time_days:.6g} d must be after the last maneuver and at most "
                         f"{hi * s.time_days:.6g} d (before the insertion at {nom.tf_tu * s.time_days:.6g} d)")
    lin = linear_covariance(nom, c, errors)
    mc = monte_carlo(nom, c, errors, n, seed, lin, runner)
    return Dispersion(nom, c, errors, n, int(seed), lin, mc)
