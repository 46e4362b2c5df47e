"""An independent CR3BP propagator for cross-checks: scipy's ``solve_ivp`` (DOP853) on equations
of motion written out here, not taken from :mod:`cr3bp.dynamics` or :mod:`cr3bp.integrate`.

Equations of motion in the rotating frame, larger primary (mass 1 - mu) at x = -mu, smaller at
x = 1 - mu (Szebehely, *Theory of Orbits*, 1967, §1.3 and §10.2); the state transition matrix
obeys Phi' = A(t) Phi with A = [[0, I], [U_rr, 2 W]], U_rr the Hessian of the effective
potential and W = [[0, 1, 0], [-1, 0, 0], [0, 0, 0]] (the Coriolis terms).
"""

import numpy as np
from scipy.integrate import solve_ivp

W = np.array([[0.0, 1.0, 0.0], [-1.0, 0.0, 0.0], [0.0, 0.0, 0.0]])


def rhs(t, y, mu):
    r = y[:3]
    v = y[3:6]
    d1 = r - np.array([-mu, 0.0, 0.0])
    d2 = r - np.array([1.0 - mu, 0.0, 0.0])
    r1, r2 = np.linalg.norm(d1), np.linalg.norm(d2)
    acc = np.array([r[0], r[1], 0.0]) - (1 - mu) * d1 / r1**3 - mu * d2 / r2**3 + 2.0 * W @ v
    out = np.concatenate([v, acc])
    if y.size == 6:
        return out
    hess = (np.diag([1.0, 1.0, 0.0])
            - (1 - mu) * (np.eye(3) / r1**3 - 3.0 * np.outer(d1, d1) / r1**5)
            - mu * (np.eye(3) / r2**3 - 3.0 * np.outer(d2, d2) / r2**5))
    A = np.zeros((6, 6))
    A[:3, 3:] = np.eye(3)
    A[3:, :3] = hess
    A[3:, 3:] = 2.0 * W
    return np.concatenate([out, (A @ y[6:].reshape(6, 6)).ravel()])


def propagate(mu, state, t, rtol=1e-12, atol=1e-12):
    """State at time t (no STM)."""
    sol = solve_ivp(rhs, (0.0, float(t)), np.asarray(state, float), method="DOP853", rtol=rtol,
                    atol=atol, args=(mu,))
    return sol.y[:, -1]


def monodromy(mu, state, period, rtol=1e-12, atol=1e-12):
    """(final state, full-period STM) propagated over the whole period (no symmetry used)."""
    y0 = np.concatenate([np.asarray(state, float), np.eye(6).ravel()])
    sol = solve_ivp(rhs, (0.0, float(period)), y0, method="DOP853", rtol=rtol, atol=atol, args=(mu,))
    return sol.y[:6, -1], sol.y[6:, -1].reshape(6, 6)


def pair_discriminant(M):
    """(s1 - s2)^2 from the eigenvalues of a monodromy matrix, s = lambda + 1/lambda of the two
    non-trivial reciprocal pairs (the two eigenvalues nearest 1 are the trivial pair, dropped).

    With s_k = lambda_k + 1/lambda_k over the four non-trivial eigenvalues (each pair gives its s
    twice), (s1 - s2)^2 = sum s_k^2 - (sum s_k)^2 / 4: no pairing of eigenvalues is needed.
    Positive for two real pairs (hyperbolic or elliptic), negative for a complex quadruple
    rho e^{+-i th}, e^{+-i th}/rho, whose s1, s2 are complex conjugates (Broucke, "Stability of
    periodic orbits in the elliptic restricted three-body problem", AIAA J. 7, 1969). Eigenvalues
    by LAPACK: nothing is shared with the library's trace method."""
    ev = list(np.linalg.eigvals(M))
    for _ in range(2):
        ev.pop(int(np.argmin([abs(e - 1.0) for e in ev])))
    s = np.array([e + 1.0 / e for e in ev])
    return float((np.sum(s * s) - np.sum(s) ** 2 / 4.0).real)
