"""``ecatlab routes``: best reaction routes from a reactant to a product (or all products) per surface."""

from __future__ import annotations

import argparse
import json
import sys

__all__ = ["register", "run"]


def register(subparsers) -> None:
    p = subparsers.add_parser(
        "routes",
        help="best route from a reactant to a product on every surface (reaction network search)",
        description=(
            "Build the reaction network from the adsorbates in FILE and the molecules the reference scheme knows, "
            "and report the route with the least negative limiting potential per surface (and runners-up). "
            "Without --to, rank all products (hydrogen evolution included) by onset potential."
        ),
    )
    p.add_argument("file", metavar="FILE", help="energy table (CSV: surface, species, G or E + corrections; eV)")
    p.add_argument("--from", dest="reactant", required=True, help="reactant molecule, e.g. CO2, N2, O2 (phase optional)")
    p.add_argument("--to", dest="product", help="product molecule, e.g. CH4, CO, HCOOH, NH3; omit to rank all products")
    p.add_argument("--surface", nargs="+", metavar="S", help="only these surfaces")
    p.add_argument("--pH", type=float, default=0.0, help="pH (default 0)")
    p.add_argument("--scale", default="RHE", choices=["RHE", "SHE", "rhe", "she"], help="potential scale (default RHE)")
    p.add_argument("--allow", nargs="+", metavar="X*", help="use only these adsorbates")
    p.add_argument("--forbid", action="append", default=[], metavar="STEP", help='leave out a step, e.g. "OCHO* + H+ + e- -> CO* + H2O(l)" (repeatable)')
    p.add_argument("--top", type=int, default=1, help="routes per surface: 1 = best only, 3 = best and two runners-up")
    p.add_argument("--chemical-limit", type=float, metavar="EV", help="block chemical steps with dG above this (eV); default: keep and report them")
    p.add_argument("--edges", action="store_true", help="print the table of all network steps with dG at 0 V instead")
    p.add_argument("--format", default="csv", choices=["csv", "markdown", "json"], help="output format (default csv)")
    p.add_argument("--figure", metavar="OUT", help="save a network figure (first surface, best route drawn) to OUT (.svg/.pdf/.png)")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    from ecatlab.energies import read_energies
    from ecatlab.network import NetworkAnalysis, build_network

    table = read_energies(args.file)
    net = build_network(table, args.reactant, allow=args.allow, forbid=args.forbid)
    an = NetworkAnalysis(net, table, pH=args.pH, scale=args.scale.upper(), surfaces=args.surface, chemical_limit=args.chemical_limit)
    if args.edges:
        frame = an.edge_table(0.0)
    elif args.product:
        frame = an.best_routes(args.product, top=args.top)
    else:
        frame = an.product_ranking()
    header = (
        f"{frame.attrs.get('quantity', '')}; {an.scale} scale, pH {an.pH:g}, {an.temperature:g} K; "
        f"{table.scheme.describe()}; energies from {table.source}. Theoretical estimates (CHE thermodynamics)."
    )
    _write(frame, args.format, header)
    if args.figure:
        import matplotlib

        matplotlib.use("Agg")
        from ecatlab.plotting.network import plot_network

        surface = an.surfaces[0]
        ax = plot_network(an, surface, args.product)
        ax.figure.savefig(args.figure, bbox_inches="tight")
        print(f"figure written to {args.figure} (surface {surface})", file=sys.stderr)
    return 0


def _write(frame, fmt: str, header: str) -> None:
    if fmt == "csv":
        print(f"# {header}")
        sys.stdout.write(frame.to_csv(index=False, float_format="%.4f"))
    elif fmt == "markdown":
        print(frame.to_markdown(index=False, floatfmt=".3f"))
        print(f"\n{header}")
    else:
        data = {"note": header, "attrs": {k: v for k, v in frame.attrs.items() if isinstance(v, (str, int, float, list, dict, type(None)))},
                "rows": json.loads(frame.to_json(orient="records"))}
        print(json.dumps(data, indent=1, default=str))
