"""Low-energy (ballistic, Sun-assisted) transfers from a circular Earth parking orbit to a
quasi-periodic torus, designed in the bicircular model, the insertion point free over both torus
angles.

The design is the periodic orbit's (:mod:`cr3bp.transfers.low_energy`: a backward sweep from the
target over insertion points, small insertion burns and Sun phases, then a differential
corrector onto the parking orbit and a continuation of the insertion burn towards zero, SLSQP
where it stalls) with the torus as the insertion end, as :mod:`cr3bp.tori.departure` made the
direct and lunar-flyby departures: the insertion state is ``W(2 pi a, 2 pi b)``, the torus
function (Olikara & Scheeres, AAS 12-361, 2012, §II), here always propagated from the invariance
circle itself (:meth:`TorusInsertion.at`; smooth in both angles). The unknowns are the orbit design's ``[a, dv_insertion (3), Sun phase at insertion]`` and
the second torus angle ``b`` after them; the sweep's insertion points are a grid of
``SWEEP_A`` x ``SWEEP_B`` torus phases.

The result is a :class:`cr3bp.transfers.low_energy.LowEnergyTransfer` whose ``orbit`` is the
torus, ``insertion_phase`` is ``a`` and ``details["torus_phase_deg"]`` both angles in degrees; so
:func:`cr3bp.transfers.low_energy.as_leg`, the figures and the JSON read it as they read a
periodic orbit's. All its values belong to the bicircular model; the torus is the CR3BP's.
"""

from __future__ import annotations

import math

import numpy as np

from ..integrate import propagate
from ..transfers import low_energy as le
from . import circle

#: Insertion points of the sweep: stroboscopic phases ``a`` times circle angles ``b``.
SWEEP_A, SWEEP_B = 8, 4


class TorusInsertion:
    """The insertion points of a torus for the low-energy design: the state of the unknowns
    ``z`` (``z[0]`` and ``z[5]`` the two angles, in revolutions) and the sweep's grid.

    Parameters
    ----------
    torus : cr3bp.tori.Torus
        The torus.
    na, nb : int, optional
        Stroboscopic phases and circle angles of the sweep's grid.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.tori.torus import example_torus
    >>> from cr3bp.tori.low_energy import TorusInsertion
    >>> pts = TorusInsertion(example_torus(), na=2, nb=2)     # hand-made, not solved
    >>> labels, states = pts.sweep_grid(None)
    >>> labels.tolist(), states.shape
    ([[0.0, 0.0], [0.0, 0.5], [0.5, 0.0], [0.5, 0.5]], (4, 6))
    >>> bool(np.allclose(pts.insertion([0.5, 0, 0, 0, 0, 0.5]), states[3]))
    True

    References
    ----------
    Olikara & Scheeres, AAS 12-361, 2012, §II (the torus function).
    """

    def __init__(self, torus, na: int = SWEEP_A, nb: int = SWEEP_B):
        self.torus = torus
        self.na, self.nb = int(na), int(nb)

    def at(self, a, b):
        """``W(2 pi a, 2 pi b)``: the invariance circle's point of angle ``2 pi b - rho a``
        propagated over ``a T`` (CR3BP). Always from the circle itself, not from the nearest of
        several stored copies (:class:`cr3bp.tori.departure.TorusPoints`): the state is then a
        smooth function of ``a``, which the corrector's finite differences need (a switch
        between copies jumps by their interpolation error, and a 100-day backward propagation
        magnifies that a hundred-thousandfold)."""
        a = float(a) % 1.0
        th = 2.0 * math.pi * float(b) - self.torus.rotation * a
        s = circle.evaluate(self.torus.circle, [th])[0]
        if a == 0.0:
            return np.array(s)
        return np.array(propagate(self.torus.system, s, a * self.torus.stroboscopic_time,
                                  rtol=le.RTOL, atol=le.ATOL).final_state)

    def insertion(self, z):
        return self.at(z[0], z[5])

    def sweep_grid(self, phases=None):
        """The sweep's insertion points: ``na * nb`` torus phases ``(a, b)`` (``a`` slowest) and
        their states (``phases``, the orbit's count of insertion phases, is not used)."""
        labels = np.array([(i / self.na, j / self.nb) for i in range(self.na) for j in range(self.nb)])
        return labels, np.array([self.at(a, b) for a, b in labels])


def design_torus_low_energy(torus, altitude_km: float = 200.0, *, epoch=None, inclination_deg=None,
                            max_tof_days=le.MAX_TOF_DAYS, min_tof_days=le.MIN_TOF_DAYS, sun_phases=None,
                            candidates=le.CANDIDATES, progress=None):
    """A low-energy transfer from a circular Earth parking orbit to ``torus``, in the bicircular
    model, the insertion point free over both torus angles (module notes).

    Parameters
    ----------
    torus : cr3bp.tori.Torus
        A torus of the Earth–Moon system.
    altitude_km, epoch, inclination_deg, max_tof_days, min_tof_days, sun_phases, candidates, progress
        As :func:`cr3bp.transfers.low_energy.design_low_energy`.

    Returns
    -------
    cr3bp.transfers.low_energy.LowEnergyTransfer
        ``orbit`` is the torus, ``insertion_phase`` is ``theta0 / 2 pi``,
        ``details["torus_phase_deg"]`` is ``[theta0, theta1]`` in degrees; all values in the
        bicircular model.

    Raises
    ------
    InputError
        Not the Earth–Moon system, or a value out of range (before any work).
    NoSolutionError
        No trajectory of the sweep comes back to the Earth in the window, or none corrects.

    Examples
    --------
    Skipped under doctest (the design takes minutes):

    >>> from cr3bp import system
    >>> from cr3bp.tori import request
    >>> t = request.solve(system("earth-moon"), "quasi-halo around halo L2 south resonance=9:2 amplitude=300km")  # doctest: +SKIP
    >>> tr = design_torus_low_energy(t, 200.0)                       # doctest: +SKIP
    >>> tr.path, len(tr.details["torus_phase_deg"])                   # doctest: +SKIP
    ('low-energy', 2)

    Refused before any work (a hand-made circle stands in for a torus):

    >>> from cr3bp.tori.torus import example_torus
    >>> design_torus_low_energy(example_torus(), 5.0)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: parking altitude 5 km; allowed: 100 km to 50000 km

    References
    ----------
    Parker & Anderson, *Low-Energy Lunar Trajectory Design*, 2013, ch. 3 (from memory);
    Boudad, Howell & Davis, Adv. Space Res. 66, 2020 (the model); Olikara & Scheeres, AAS
    12-361, 2012, §II (the torus function).
    """
    tr = le._design(torus, altitude_km, epoch=epoch, inclination_deg=inclination_deg, max_tof_days=max_tof_days,
                    min_tof_days=min_tof_days, sun_phases=sun_phases, candidates=candidates, progress=progress,
                    points=lambda: TorusInsertion(torus))
    z = tr.details["unknowns"]
    tr.details["torus_phase_deg"] = [math.degrees(2 * math.pi * (z[0] % 1.0)), math.degrees(2 * math.pi * (z[5] % 1.0))]
    return tr


__all__ = ["TorusInsertion", "design_torus_low_energy"]
