"""A stitched route (:class:`cr3bp.transfers.stitch.StitchedRoute`) in the file formats: the
rows of its rotating-frame trajectory table and the :class:`cr3bp.io.export.Trajectory` the
OEM, CSV and JSON writers take."""

from __future__ import annotations

import numpy as np
from . import export
from ..dynamics import jacobi


def trajectory_rows(result):
    """CSV rows of the stitched trajectory: time (TU and d), segment, state (LU, LU/TU), km, Jacobi."""
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
    """The stitched route as a :class:`cr3bp.io.export.Trajectory` (maneuver-free segments
    joined at the maneuvers, impulses in the rotating frame nondimensional), ready for
    ``export.write_oem`` / ``write_csv`` / ``write_json``."""
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
    model = {"route": " -> ".join(result.nodes), "dv_total_design_mps (CR3BP)": result.dv_total_mps,
             "tof_days": result.tof_days, "method": "multiple shooting (librate stitch)"}
    return export.Trajectory(frame_spec, tuple(segs), "TDB", mans, object_name, "NONE", model)
