"""The result of :func:`cr3bp.api.propagate_state` (``librate propagate``): one state followed in
the circular restricted three-body model or the Earth-Moon-Sun bicircular model.

:class:`Propagation` holds the integrated arc (:class:`cr3bp.integrate.Arc`), the start, the
model and the energy at both ends; ``to_dict()`` gives the command's JSON fields, ``rows()`` its
CSV rows, ``plot(ax=None)`` draws the path on a matplotlib Axes and returns it.
"""

from __future__ import annotations

import html
from dataclasses import dataclass

import numpy as np

from .cautions import caution_short
from .errors import InputError

#: Points of the dense output drawn by :meth:`Propagation.plot` and ``librate propagate --plot``.
PLOT_POINTS = 2000


def _to_km(system, s):
    return [float(v) * system.length_km for v in s[:3]] + [float(v) * system.velocity_kms for v in s[3:6]]


@dataclass(frozen=True)
class Propagation:
    """A state propagated over a time, with its energy check (``librate propagate``).

    Parameters
    ----------
    system : System
    model : cr3bp.bicircular.BicircularSystem or None
        None for the circular restricted three-body model.
    initial_state : ndarray, shape (6,)
        Start, barycentric rotating frame, LU and LU/TU.
    arc : cr3bp.integrate.Arc
        The integrated arc: ``t``, ``states``, ``final_state``, ``status``, ``events``, ``stm``.
    rtol, atol : float
        The integrator's tolerances.
    energy_initial, energy_final : float
        Jacobi constant (CR3BP) or bicircular Hamiltonian at both ends.

    Examples
    --------
    >>> import cr3bp
    >>> p = cr3bp.propagate_state("earth-moon", [0.8234, 0, 0.0224, 0, 0.1343, 0], "1d")
    >>> p.status, abs(p.to_dict()["jacobi_drift"]) < 1e-10
    ('time', True)

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, §1.6 (the Jacobi integral, whose
       drift checks the integration; from memory).
    """

    system: object
    model: object
    initial_state: np.ndarray
    arc: object
    rtol: float
    atol: float
    energy_initial: float
    energy_final: float

    @property
    def status(self) -> str:
        """How the integration ended (``"time"``: at the time asked, or the event that stopped it)."""
        return self.arc.status

    @property
    def final_state(self) -> np.ndarray:
        """The state at the end, LU and LU/TU."""
        return self.arc.final_state

    @property
    def energy_key(self) -> str:
        """``"jacobi"`` (CR3BP) or ``"hamiltonian"`` (bicircular)."""
        return "jacobi" if self.model is None else "hamiltonian"

    def energy(self, t, states):
        """Jacobi constant (CR3BP) or the bicircular Hamiltonian of ``states`` at times ``t``."""
        from .dynamics import jacobi  # lazy: heavy library (numba kernels)
        if self.model is None:
            return jacobi(self.system.mu, states)
        from . import bicircular  # lazy: heavy library (numba kernels)
        return bicircular.hamiltonian(self.model, t, states)

    def to_dict(self) -> dict:
        """The fields of ``librate propagate --format json`` (in its order)."""
        system, arc, dim = self.system, self.arc, self.system.dimensional
        c0, c1 = self.energy_initial, self.energy_final
        key = self.energy_key
        d = {
            "system": system.name,
            "model": "cr3bp" if self.model is None else "bicircular",
            "status": arc.status,
            "t_final": arc.t_final,
            "t_final_days": arc.t_final * system.time_days if dim else None,
            "initial_state": self.initial_state.tolist(),
            "final_state": arc.final_state.tolist(),
            f"{key}_initial": c0,
            f"{key}_final": c1,
            f"{key}_{'drift' if self.model is None else 'change'}": c1 - c0,
            "events": [{"name": e.name, "t": e.t, "t_days": e.t * system.time_days if dim else None,
                        "state": e.state.tolist()} for e in arc.events],
            "steps": arc.nsteps,
            "rhs_evaluations": arc.nfev,
            "rtol": self.rtol,
            "atol": self.atol,
        }
        if self.model is not None:
            d["bicircular"] = {k: v for k, v in self.model.to_dict().items() if k != "system"}
        if dim:
            d["final_state_km"] = _to_km(system, arc.final_state)
        if arc.stm is not None:
            d["stm"] = arc.stm.tolist()
        return d

    def headers(self) -> list:
        """Column names of :meth:`rows`."""
        h = ["t_tu", "t_days", "x_lu", "y_lu", "z_lu", "vx_vu", "vy_vu", "vz_vu", self.energy_key]
        if self.system.dimensional:
            h += ["x_km", "y_km", "z_km", "vx_kms", "vy_kms", "vz_kms"]
        return h

    def rows(self) -> list:
        """One row per output time (``librate propagate --format csv``): time, state, energy
        (and km, km/s when the system has units)."""
        arc, system, dim = self.arc, self.system, self.system.dimensional
        cs = self.energy(arc.t, arc.states) if len(arc.t) else np.empty(0)
        rows = []
        for k in range(len(arc.t)):
            s = arc.states[k]
            row = [float(arc.t[k]), float(arc.t[k] * system.time_days) if dim else "", *map(float, s), float(cs[k])]
            if dim:
                row += _to_km(system, s)
            rows.append(row)
        return rows

    def sample(self, n: int = PLOT_POINTS) -> np.ndarray:
        """``n`` states evenly spaced in time from the start to the end, from the integrator's
        dense output (the path drawn by :meth:`plot` and ``--plot``)."""
        t = np.linspace(0.0, self.arc.t_final, int(n))
        if self.model is None:
            from .integrate import propagate  # lazy: heavy library (numba kernels)
            return propagate(self.system, self.initial_state, self.arc.t_final, rtol=self.rtol, atol=self.atol,
                             t_eval=t).states
        from . import bicircular  # lazy: heavy library (numba kernels)
        return bicircular.propagate(self.model, self.initial_state, self.arc.t_final, rtol=self.rtol,
                                    atol=self.atol, t_eval=t).states

    def _line(self):
        t = self.arc.t_final
        when = f"{t:.6g} TU" + (f" = {self.system.days(t):.4f} d" if self.system.dimensional else "")
        what = "CR3BP" if self.model is None else "bicircular model"
        drift = "Jacobi drift" if self.model is None else "Hamiltonian change"
        return (f"{self.system.name} state propagated {when} ({self.status}), "
                f"{drift} {self.energy_final - self.energy_initial:.1e} ({what})")

    def __repr__(self):
        return f"<Propagation {self._line()}>"

    def _repr_html_(self):
        d = self.to_dict()
        rows = [("system", d["system"]), ("model", d["model"]), ("status", d["status"]),
                ("time (" + ("CR3BP" if self.model is None else "bicircular") + ")",
                 f"{d['t_final']:.9g} TU" + (f" = {d['t_final_days']:.6f} d" if d["t_final_days"] is not None
                                             else "")),
                ("final state [LU, LU/TU]", ", ".join(f"{v:.9g}" for v in d["final_state"])),
                (f"{self.energy_key} drift", f"{self.energy_final - self.energy_initial:.2e}"),
                ("events", ", ".join(e["name"] for e in d["events"]) or "none")]
        body = "".join(f"<tr><th style='text-align:left'>{html.escape(k)}</th>"
                       f"<td style='text-align:left'>{html.escape(str(v))}</td></tr>" for k, v in rows)
        return (f"<table><caption style='text-align:left'><b>Propagation</b></caption>{body}"
                f"<tr><td colspan='2' style='text-align:left;font-size:smaller'>{html.escape(caution_short())}"
                "</td></tr></table>")

    def plot(self, ax=None, view: str = "xy"):
        """Draw the path (dense output) in the rotating frame on ``ax`` and return the Axes.

        Parameters
        ----------
        ax : matplotlib.axes.Axes, optional
            A new figure when None.
        view : {"xy", "xz", "yz"}

        Returns
        -------
        matplotlib.axes.Axes
        """
        axes = {"xy": (0, 1), "xz": (0, 2), "yz": (1, 2)}
        if view not in axes:
            raise InputError(f"view {view!r} is not allowed; allowed: xy, xz, yz")
        if ax is None:
            import matplotlib.pyplot as plt  # lazy: heavy library (matplotlib)
            _, ax = plt.subplots()
        s = self.sample()
        i, j = axes[view]
        ax.plot(s[:, i], s[:, j], lw=1)
        ax.plot(s[0, i], s[0, j], "o", ms=4)
        ax.set_xlabel(f"{view[0]} [LU] (rotating frame)")
        ax.set_ylabel(f"{view[1]} [LU] (rotating frame)")
        ax.set_aspect("equal", adjustable="datalim")
        ax.set_title(self._line(), fontsize=8)
        from .display import _caption  # lazy: heavy library (matplotlib, via the caption)
        _caption(ax, "cr3bp" if self.model is None else "bicircular")
        return ax

