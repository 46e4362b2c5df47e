"""A stitched route (:class:`cr3bp.transfers.stitch.StitchedRoute`) in the file formats: the
rows of its rotating-frame trajectory table and the :class:`cr3bp.io.export.Trajectory` the
OEM, CSV and JSON writers take."""

from __future__ import annotations

import numpy as np
from . import export
from ..dynamics import jacobi


def trajectory_rows(result):
    """CSV rows of the stitched trajectory: time (TU and d), segment, state (LU, LU/TU), km, Jacobi.

    Parameters
    ----------
    result : StitchResult
        A stitched route (:mod:`cr3bp.transfers.stitch`): ``system``, ``times_tu``,
        ``times_days``, ``segment`` and ``states``.

    Returns
    -------
    header : list of str
        The column names.
    rows : list of list
        One row per sample.

    Raises
    ------
    AttributeError
        A result without the stitched trajectory.

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> from cr3bp.systems import system
    >>> r = SimpleNamespace(system=system("earth-moon"), times_tu=[0.0], times_days=[0.0],
    ...                     segment=[0], states=np.array([[0.8, 0.0, 0.0, 0.0, 0.1, 0.0]]))
    >>> header, rows = trajectory_rows(r)
    >>> header[-1], round(rows[0][9])
    ('jacobi', 307520)

    References
    ----------
    RFC 4180, "Common Format and MIME Type for Comma-Separated Values (CSV) Files" (2005);
    Szebehely, V., "Theory of Orbits", Academic Press (1967) (the Jacobi constant).
    """
    s = result.system
    C = jacobi(s.mu, result.states)
    rows = []
    for tu, t, k, st, c in zip(result.times_tu, result.times_days, result.segment, result.states,
                               np.atleast_1d(C)):
        rows.append([float(tu), float(t), int(k), *map(float, st), *(float(v) * s.length_km for v in st[:3]),
                     float(c)])
    return ["t_tu", "t_days", "segment", "x_lu", "y_lu", "z_lu", "vx_vu", "vy_vu", "vz_vu", "x_km", "y_km", "z_km",
            "jacobi"], rows


def to_export(result, frame_spec, object_name="LIBRATE ROUTE"):
    """The stitched route as a :class:`cr3bp.io.export.Trajectory`.

    Maneuver-free segments joined at the maneuvers, impulses in the rotating frame
    nondimensional, ready for ``export.write_oem`` / ``write_csv`` / ``write_json``.

    Parameters
    ----------
    result : StitchResult
        A stitched route (:mod:`cr3bp.transfers.stitch`).
    frame_spec : FrameSpec
        Where the trajectory is put (:func:`cr3bp.time.frames.frame`).
    object_name : str, optional
        The object's name in the files.

    Returns
    -------
    Trajectory
        The segments and maneuvers.

    Raises
    ------
    ValueError
        A result without samples (nothing to join).

    Examples
    --------
    >>> traj = to_export(stitched, spec)          # doctest: +SKIP

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages", Blue Book (2023) (the OEM the trajectory is written
    to).
    """
    s = result.system
    man_t = [m["t_days"] / s.time_days for m in result.maneuvers]
    inner = man_t[1:-1] if len(man_t) >= 2 else []
    # shooting segments whose start time is an interior maneuver time begin a new export segment
    segs, cur_t, cur_s = [], [], []
    for k in np.unique(result.segment):
        m = result.segment == k
        t, st = result.times_tu[m], result.states[m]
        if cur_t and any(abs(t[0] - tm) < 1e-9 for tm in inner):
            segs.append(export.Segment(np.concatenate(cur_t), np.concatenate(cur_s)))
            cur_t, cur_s = [], []
        if cur_t:                                    # drop the duplicate boundary sample
            t, st = t[1:], st[1:]
        cur_t.append(t)
        cur_s.append(st)
    segs.append(export.Segment(np.concatenate(cur_t), np.concatenate(cur_s)))
    vu = s.velocity_kms * 1e3
    mans = tuple(export.Maneuver(float(tm), np.asarray(m["dv_vector_mps"]) / vu,
                                  f"{m['name']} at {m['node']}" if m.get("name") else m["node"], float(m["dv_mps"]))
                 for tm, m in zip(man_t, result.maneuvers))
    mname = getattr(result, "model", "CR3BP")
    model = {"route": " -> ".join(result.nodes), f"dv_total_design_mps ({mname})": result.dv_total_mps,
             "tof_days": result.tof_days, "method": "multiple shooting (librate stitch)" if mname == "CR3BP"
             else "the low-energy leg as designed in the bicircular model (Sun-Earth-Moon)"}
    return export.Trajectory(frame_spec, tuple(segs), "TDB", mans, object_name, "NONE", model)
