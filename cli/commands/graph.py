"""librate graph: build a transfer graph from a node list, list its legs and nodes, draw it."""

from .. import common
from . import _graphing

NAME = "graph"
ORDER = 74
HELP = "transfer graph from a node list: compute and cache the legs, list them, draw the schematic"
EXAMPLE = "librate graph build --system earth-moon --nodes nodes.toml --workers 2"

#: compiled kernels this command uses (checked for the first-run compile notice)
KERNELS = (("cr3bp.integrate.dop853", "integrate"), ("cr3bp.integrate.lanes", "integrate_lanes"))


def add_arguments(p):
    p.add_argument("action", choices=("build", "show"),
                   help="build: compute the legs and list them; show: list the nodes and draw the graph")
    common.add_system_options(p)
    _graphing.add_build_options(p)
    common.add_plot_option(p, "draw the graph schematic")
    common.add_output_options(p)


def run(args):
    system = common.resolve_system(args)
    nodelist, result = _graphing.build(args, system)
    g = result.graph
    payload = dict(result.to_dict(), system=system.name, node_list=args.nodes, plot=args.plot)
    if args.plot:
        from cr3bp.plotting import save
        from cr3bp.plotting.routes import plot_graph
        ax = plot_graph(g)
        save(ax.figure, args.plot, f"{system.name}: nodes placed by the x of their state and their Jacobi "
             f"constant; {g.number_of_edges()} legs computed by two-impulse targeting (Δv, time of flight).")
        common.progress(args, f"wrote {args.plot}")
    summary = (f"\n{len(nodelist.nodes)} nodes, {g.number_of_edges()} usable legs; {result.computed} computed "
               f"now, {result.cached} from the catalogue, {len(result.pruned)} pair(s) pruned.\n")
    if args.action == "build":
        headers, rows = _graphing.LEG_HEADERS, _graphing.leg_rows(result)
        table = common.format_table(headers, rows, title=f"{system.name}: legs of {args.nodes}") + summary
    else:
        headers = ["name", "kind", "id", "jacobi", "x_lu", "legs_out", "legs_in"]
        rows = [[n.name, n.kind, n.id, g.nodes[n.id]["jacobi"], g.nodes[n.id]["x"], g.out_degree(n.id),
                 g.in_degree(n.id)] for n in nodelist.nodes]
        table = common.format_table(headers, rows, title=f"{system.name}: nodes of {args.nodes}") + summary
    common.emit(args, payload=payload, headers=headers, rows=rows, table=table)
    return 0
