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
    p.add_argument("--from", dest="reactant", required=True, help="reactant molecule, e.g. CO2, N2, O2 (phase optional); '2 CO2' starts with two (C2 products)")
    p.add_argument("--to", dest="product", help="product molecule, e.g. CH4, CO, HCOOH, NH3; omit to rank all products")
    p.add_argument("--surface", nargs="+", metavar="S", help="only these surfaces")
    p.add_argument("--pH", type=float, default=0.0, help="pH (default 0)")
    p.add_argument("--scale", default="RHE", choices=["RHE", "SHE", "rhe", "she"], help="potential scale (default RHE)")
    p.add_argument("--allow", nargs="+", metavar="X*", help="use only these adsorbates")
    p.add_argument("--forbid", action="append", default=[], metavar="STEP", help='leave out a step, e.g. "OCHO* + H+ + e- -> CO* + H2O(l)" (repeatable)')
    p.add_argument("--sites", type=int, default=1, metavar="N", help="adsorbates on the surface at once (default 1; 2 for C-C coupling)")
    p.add_argument("--coupling", action="store_true", help="add chemical coupling steps X* + Y* -> Z* + * (needs --sites 2 or more), e.g. 2 CO* -> OCCO* + *")
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
    options = dict(allow=args.allow, forbid=args.forbid, sites=args.sites, coupling=args.coupling)
    net = build_network(table, args.reactant, **options)
    if args.product:
        _check_reachable(table, args.reactant, args.product, net, options)
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


def _check_reachable(table, reactant: str, product: str, net, options: dict) -> None:
    """Raise a PathwayError saying which of --from 'N X', --sites, --coupling the product needs."""
    from ecatlab.errors import NotationError, PathwayError
    from ecatlab.network import build_network
    from ecatlab.notation import Species

    try:
        net.product_state(product)
        return
    except PathwayError as exc:
        first = str(exc)
    hints = []
    try:
        text = product if "(" in product else f"{product}(g)"
        need = Species.parse(text).elements
        have = Species.parse(net.reactant).elements
        ratios = [need.get(el, 0.0) / n for el, n in have.items() if el not in ("H", "O") and n > 0]
        k = int(round(max(ratios))) if ratios else 1
    except NotationError:
        k = net.reactant_count
    if k > net.reactant_count:
        hints.append(f"{product} holds {k} times the carbon/nitrogen of one {net.reactant}: start from --from '{k} {Species.parse(net.reactant).formula}'")
    if k > 1 and (options["sites"] < 2 or not options["coupling"]):
        try:
            wider = build_network(table, f"{max(k, net.reactant_count)} {Species.parse(net.reactant).formula}",
                                  **{**options, "sites": max(2, options["sites"]), "coupling": True})
            wider.product_state(product)
            hints.append(f"routes to {product} exist with --sites {max(2, options['sites'])} --coupling")
        except PathwayError:
            hints.append(f"no route to {product} even with --sites 2 --coupling: the table lacks the C-C coupled intermediates (e.g. OCCO*)")
    raise PathwayError(f"{first}" + (f". {'; '.join(hints)}" if hints else ""))


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
