"""Transit classification (Conley, "Low energy transit orbits in the restricted three-body
problem", SIAM J. Appl. Math. 16, 1968; Koon, Lo, Marsden & Ross, *Dynamical Systems, the
Three-Body Problem and Space Mission Design*, 2011, §3.3): at the energy of a tube, states on a
section inside the tube's closed cut pass through the neck, those outside do not; and whether
the necks at the collinear points are open at an energy.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError, NoSolutionError
from .sections import Crossings, map_coordinate
from .manifolds import _lagrange_jacobi


def transit(cut: Crossings, states, names=("y", "vy")) -> np.ndarray:
    """True for each state (K, 6) on the cut's section, at the tube's energy, that lies inside
    the tube's closed cut in the map ``names`` (a transit orbit, Conley 1968), False outside.

    Raises
    ------
    InputError
        The cut is not closed (some tube trajectories did not reach the section).

    Parameters
    ----------
    cut : Crossings
        A closed tube cut (:mod:`cr3bp.tubes.sections`).
    states : array_like, shape (K, 6)
        States on the cut's section, at the tube's energy.
    names : sequence of str
        The map's coordinates.

    Returns
    -------
    numpy.ndarray of bool, shape (K,)
        True inside the cut (transit), False outside.

    Examples
    --------
    >>> inside = transit(cut, states, ("y", "vy"))           # doctest: +SKIP

    References
    ----------
    Conley, C. C., "Low energy transit orbits in the restricted three-body problem", SIAM
    Journal on Applied Mathematics 16, 732 (1968); Koon, W. S., Lo, M. W., Marsden, J. E. & Ross, S. D., "Dynamical Systems, the Three-Body
    Problem and Space Mission Design", Marsden Books (2011), ch. 3.
    """
    if not cut.closed:
        raise InputError("the tube's cut is not a closed curve (not every trajectory reached the "
                         "section); grow it to a section nearer the orbit")
    s = np.atleast_2d(np.asarray(states, dtype=float))
    pts = np.column_stack([map_coordinate(cut.system, cut.section, s, np.zeros(len(s)), n)
                           for n in names])
    return cut.contains(pts, names)


def necks_open(system, jacobi_value, points=("L1", "L2")):
    """Raise NoSolutionError unless the energy is above that of each named Lagrange point
    (C below C(Li)), so the necks at those points are open (Koon et al. 2011, §2.4).

    Parameters
    ----------
    system : System
        The system.
    jacobi_value : float
        The Jacobi constant.
    points : sequence of str
        Lagrange points whose necks must be open (``"L1"``, ``"L2"``).

    Returns
    -------
    None

    Raises
    ------
    NoSolutionError
        A neck is closed (the message gives the nearest feasible value).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> em = system("earth-moon")
    >>> necks_open(em, 3.1, ("L1", "L2")) is None
    True

    References
    ----------
    Koon, W. S., Lo, M. W., Marsden, J. E. & Ross, S. D., "Dynamical Systems, the Three-Body
    Problem and Space Mission Design", Marsden Books (2011), sec. 2.4.
    """
    for pt in points:
        c = _lagrange_jacobi(system, pt)
        if not jacobi_value < c:
            raise NoSolutionError(
                f"Jacobi constant {jacobi_value:.6f} is not below C({pt}) = {c:.6f}: the {pt} neck "
                f"is closed; the nearest feasible value is just below {c:.6f}")
