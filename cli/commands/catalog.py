"""librate catalog: list, show, search and remove catalogued families of periodic orbits."""

from .. import common
from . import _orbit_options as oo

NAME = "catalog"
KERNELS = ()   # reads and writes the catalogue: no propagation
ORDER = 60
HELP = "list, show, search (find) and remove families kept in the orbit catalogue"
EXAMPLE = "librate catalog find --system earth-moon --family halo --point L2 --branch south --period 6.56d"


def add_arguments(p):
    sub = p.add_subparsers(dest="action", metavar="ACTION")
    sub.required = True
    a = sub.add_parser("list", help="the catalogued families")
    _common(a)
    a = sub.add_parser("show", help="the members and bifurcations of one family")
    a.add_argument("id", type=int, help="family id (see 'librate catalog list')")
    _common(a)
    a = sub.add_parser("find", help="the catalogued members nearest a target value (no computation)")
    common.add_system_options(a)
    oo.add_family_options(a)
    oo.add_target_options(a)
    _common(a)
    a = sub.add_parser("remove", help="delete one family")
    a.add_argument("id", type=int, help="family id")
    _common(a)


def _common(a):
    common.add_catalog_options(a, used_by_default=True, opt_out=False)
    common.add_output_options(a)


def run(args):
    cat = common.open_catalog(args)
    try:
        return {"list": _list, "show": _show, "find": _find, "remove": _remove}[args.action](args, cat)
    finally:
        cat.close()


def _list(args, cat):
    from cr3bp import api
    fams = api.catalog_list(cat)
    headers = ["id", "system", "family", "point", "branch", "members", "complete"]
    rows = [[f["id"], f["system"], f["family"], f["point"], f["branch"], f["members"], f["complete"]] for f in fams]
    common.emit(args, payload={"catalog": cat.path, "families": fams}, headers=headers, rows=rows,
                table=common.format_table(headers, rows, title=f"orbit catalogue {cat.path}"))
    return 0


MEMBER_HEADERS = ["index", "x", "y", "z", "vx", "vy", "vz", "period", "period_days", "jacobi", "nu1", "nu2",
                  "periodicity_error", "amplitude_x_km", "amplitude_y_km", "amplitude_z_km"]


def _member_row(m):
    a = m.get("amplitude_km") or {}
    nu = m.get("stability_indices") or [None, None]
    return [m["index"], *m["state"], m["period"], m.get("period_days"), m["jacobi"], *nu,
            m.get("periodicity_error"), a.get("x"), a.get("y"), a.get("z")]


def _show(args, cat):
    from cr3bp import api
    f = api.catalog_show(args.id, cat)
    rows = [_member_row(m) for m in f["members"]]
    title = (f"family {f['id']}: {f['system']} {f['family']} {f['point']} {f['branch']}, "
             f"{len(rows)} members" + ("" if f["complete"] else " (incomplete)"))
    bif = "".join(f"  bifurcation {b.get('type')} after member {b.get('member_index')}: Jacobi constant "
                  f"{b.get('jacobi'):.10f}\n" for b in f["bifurcations"])
    common.emit(args, payload=f, headers=MEMBER_HEADERS, rows=rows,
                table=common.format_table(MEMBER_HEADERS, rows, title=title) + bif, comments=[title])
    return 0


def _find(args, cat):
    from cr3bp import api
    from cr3bp.errors import InputError, NoSolutionError
    from cr3bp.orbits import continuation, targets
    from cr3bp.orbits.request import family_key
    system = common.resolve_system(args)
    given = oo.targets_given(args)
    if len(given) != 1:
        raise InputError("give exactly one target, e.g. --period 6.56d or --az 12000km")
    spec = api.orbit_request(system, family=args.family, point=args.point, branch=args.branch, ratio=args.ratio,
                             **given)
    tg = targets.make_target(system, spec.key, spec.value)
    fam, point, branch = family_key(spec)
    rec = cat.load_family(system, fam, point, branch)
    if rec is None or not rec["members"]:
        raise NoSolutionError(f"no {fam} {point} {branch} family of {system.name} in the catalogue "
                              f"{cat.path}; compute one with 'librate family ... --catalog'")
    members = rec["members"]
    vals = [continuation.member_value(m, tg.quantity) for m in members]
    lo, hi = min(vals), max(vals)
    if not lo <= tg.value <= hi:
        d = targets.describe_value
        raise NoSolutionError(f"no catalogued member near {spec.key} = {spec.value}: family {rec['id']} covers "
                              f"{spec.key} from {d(system, tg.quantity, lo)} to {d(system, tg.quantity, hi)}")
    order = sorted(range(len(members)), key=lambda k: abs(vals[k] - tg.value))[:3]
    rows = [_member_row(members[k]) for k in order]
    title = (f"family {rec['id']}: catalogued members nearest {spec.key} = {spec.value} "
             "(use 'librate orbit ... --catalog' for the exact orbit)")
    common.emit(args, payload={"family_id": rec["id"], "target": tg.to_dict(),
                               "members": [members[k] for k in order]},
                headers=MEMBER_HEADERS, rows=rows, table=common.format_table(MEMBER_HEADERS, rows, title=title),
                comments=[title])
    return 0


def _remove(args, cat):
    from cr3bp import api
    api.catalog_remove(args.id, cat)
    common.progress(args, f"removed family {args.id} from {cat.path}")
    common.emit(args, payload={"removed": args.id, "catalog": cat.path}, headers=["removed"], rows=[[args.id]],
                table=f"removed family {args.id} from {cat.path}\n")
    return 0
