"""``ecatlab routes``: best reaction routes from a reactant to a product (or all products) per surface."""

from __future__ import annotations

import argparse
import json
import sys

from ecatlab.cli import _options as opt
from ecatlab.errors import OptionError, PathwayError

FORMATS = ("csv", "markdown", "latex", "html", "json")
_SUFFIXES = ("csv", "tsv", "md", "markdown", "tex", "latex", "html", "htm", "json")

__all__ = ["register", "run"]


def register(subparsers) -> None:
    p = subparsers.add_parser(
        "routes",
        help="best route from a reactant to a product on every surface (reaction network search)",
        description=(
            "Build the reaction network from the adsorbates in FILE and the molecules the reference scheme knows, "
            "and report per surface the best route: no uphill chemical step if possible, then the least negative limiting "
            "potential (and alternatives avoiding the better routes' bottleneck steps). "
            "Without --to, rank all products (hydrogen evolution included) by onset potential."
        ),
    )
    p.add_argument("file", metavar="FILE", help="energy table (CSV: surface, species, G or E + corrections; eV)")
    p.add_argument("--from", dest="reactant", required=True, help="reactant molecule, e.g. CO2, N2, O2 (phase optional); '2 CO2' starts with two (C2 products)")
    p.add_argument("--to", dest="product", help="product molecule, e.g. CH4, CO, HCOOH, NH3; omit to rank all products")
    opt.add_surface(p)
    opt.add_conditions(p)
    p.add_argument("--allow", nargs="+", metavar="X*", help="use only these adsorbates")
    p.add_argument("--forbid", action="append", default=[], metavar="STEP", help='leave out a step, e.g. "OCHO* + H+ + e- -> CO* + H2O(l)" (repeatable)')
    p.add_argument("--sites", type=opt.int_range(1, 4), default=1, metavar="N", help="adsorbates on the surface at once (1 to 4, default 1; 2 for C-C coupling)")
    p.add_argument("--coupling", action="store_true", help="add chemical coupling steps X* + Y* -> Z* + * (needs --sites 2 or more), e.g. 2 CO* -> OCCO* + *")
    p.add_argument("--top", type=opt.int_range(1, 50), default=1, help="routes per surface: 1 = best only, 3 = best and two runners-up (1 to 50)")
    p.add_argument("--chemical-limit", type=opt.finite_float, metavar="EV", help="block chemical steps with dG above this (eV, finite); any uphill chemical step already makes a route 'blocked'; default: keep and report them")
    p.add_argument("--edges", action="store_true", help="print the table of all network steps with dG at 0 V instead")
    p.add_argument("--format", type=str.lower, choices=FORMATS, default=None, help="output format (default: from the -o extension, else csv)")
    p.add_argument("--decimals", type=opt.int_range(0, 12), default=None,
                   help="decimals of potentials and energies (0 to 12; default 3 in md/tex/html, 6 in csv; json keeps all)")
    p.add_argument("--figure", metavar="OUT", help="save a network figure (first surface, best route drawn) to OUT (.svg/.pdf/.png)")
    opt.add_output(p, "table file to write instead of printing (.csv, .tsv, .md, .tex, .html, .json)")
    g = p.add_argument_group("network from molecular structure")
    g.add_argument("--uncomputed", action="store_true", help="also use intermediates the table lacks (energies estimated, see --estimate)")
    g.add_argument("--estimate", choices=["additivity", "scaling"], help="estimate missing adsorbate energies: group additivity or binding-atom scaling fitted on the table (implies --uncomputed)")
    g.add_argument("--computed-only", action="store_true", help="keep only routes through computed (tabulated) species")
    g.add_argument("--max-carbons", type=opt.int_range(0, 12), metavar="N", help="largest number of carbon atoms of any intermediate")
    g.add_argument("--max-steps", type=opt.int_range(1, 100), metavar="N", help="largest number of steps from the reactant")
    g.add_argument("--products", nargs="+", metavar="P", help="products of interest: drop states that reach none of them")
    g.add_argument("--forbid-pattern", action="append", default=[], metavar="SMARTS", help="leave out intermediates matching a SMARTS pattern (surface = *), repeatable")
    g.add_argument("--structure", action="append", default=[], metavar="NAME=SMILES", help="structure of a table species, binding atom marked with *, e.g. 'HCOO*=*OC=O' (repeatable)")
    g.add_argument("--stuck", type=opt.finite_float, metavar="U", help="with --to: where each surface gets stuck at potential U (V on the scale)")
    g.add_argument("--prune", type=opt.finite_float, metavar="U", help="print the steps of the network pruned at potential U (V) on the first surface")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    from ecatlab import safe_io
    from ecatlab.safe_io import check_output
    from ecatlab.tables import table_format

    opt.check_input_file(args.file)
    target = opt.output_target(args, _SUFFIXES, [args.file], what="table")
    kind = table_format(args.output, args.format) if args.output else (args.format or "csv")
    if args.figure is not None:
        check_output(args.figure, force=args.force, inputs=[args.file, args.output], suffixes=("svg", "pdf", "png"),
                     option="--figure", what="network figure")
        if target is not None and safe_io.same_file(target, args.figure):
            raise OptionError("-o and --figure name the same file; give two different names")

    from ecatlab.energies import read_energies
    from ecatlab.network import NetworkAnalysis, build_network

    from ecatlab.errors import EcatlabError

    table = read_energies(args.file, temperature=args.temperature)
    surfaces = opt.check_surfaces(table, args.surface)
    opt.check_species(table, args.allow or [], "--allow")
    structures = {}
    for item in args.structure:
        name, sep, smiles = item.partition("=")
        if not sep or not name.strip() or not smiles.strip():
            raise OptionError(f"--structure {item!r}: write NAME=SMILES, e.g. 'HCOO*=*OC=O'")
        structures[name.strip()] = smiles.strip()
    options = dict(allow=args.allow, forbid=args.forbid, sites=args.sites, coupling=args.coupling)
    extra = dict(structures=structures or None, uncomputed=bool(args.uncomputed or args.estimate), max_carbons=args.max_carbons,
                 max_steps=args.max_steps, products=args.products, forbid_patterns=args.forbid_pattern)
    try:
        net = build_network(table, args.reactant, **options, **extra)
    except PathwayError as exc:
        raise opt.suggest_known(exc, args.reactant.split()[-1]) from None
    if args.product:
        try:
            _check_reachable(table, args.reactant, args.product, net, options)
        except PathwayError as exc:
            raise opt.suggest_known(exc, args.product) from None
    if args.stuck is not None and not args.product:
        raise OptionError("--stuck needs --to PRODUCT")
    an = NetworkAnalysis(net, table, pH=args.pH, scale=args.scale, temperature=args.temperature, surfaces=surfaces,
                         chemical_limit=args.chemical_limit, estimates=args.estimate, computed_only=args.computed_only)
    if args.prune is not None:
        pruned = an.pruned(args.prune, surface=an.surfaces[0])
        frame = NetworkAnalysis(pruned, table, pH=an.pH, scale=an.scale, temperature=an.temperature, surfaces=[an.surfaces[0]],
                                estimates=args.estimate, computed_only=args.computed_only).edge_table(args.prune)
        frame.attrs["quantity"] = f"steps downhill at U = {args.prune:g} V on {an.surfaces[0]} ({len(pruned.states)} of {len(net.states)} states)"
    elif args.edges:
        frame = an.edge_table(0.0)
    elif args.stuck is not None:
        frame = an.stuck_points(args.product, potential=args.stuck)
    elif args.product:
        frame = an.best_routes(args.product, top=args.top)
    else:
        frame = an.product_ranking()
    from ecatlab.tables import ILLUSTRATIVE_NOTE, is_illustrative

    header = (
        (ILLUSTRATIVE_NOTE + " " if is_illustrative(table) else "")
        + f"{frame.attrs.get('quantity', '')}; {an.scale} scale, pH {an.pH:g}, {an.temperature:g} K; "
        f"{table.scheme.describe()}; energies from {table.source}. Theoretical estimates (CHE thermodynamics)."
    )
    sep = "\t" if target is not None and target.suffix.lower() == ".tsv" else ","
    text = _render(frame, kind, header, args.decimals, sep)
    figure = None
    if args.figure:
        import matplotlib

        matplotlib.use("Agg")
        from ecatlab.plotting.network import plot_network

        figure = plot_network(an, an.surfaces[0], args.product).figure
    if figure is not None:  # written first: a failed figure write leaves no table output behind
        from ecatlab.plotting.export import save_figure

        save_figure(figure, args.figure, force=args.force, inputs=[args.file])
    if target is None:
        sys.stdout.write(text)
    else:
        safe_io.atomic_write_text(target, text, force=args.force, inputs=[args.file], what="table")
        print(f"wrote {len(frame)} rows ({kind}) to {target}", file=sys.stderr)
    if figure is not None:
        print(f"figure written to {args.figure} (surface {an.surfaces[0]})", file=sys.stderr)
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


def _render(frame, fmt: str, header: str, decimals: int | None, sep: str = ",") -> str:
    if fmt == "json":
        data = {"note": header, "attrs": {k: v for k, v in frame.attrs.items() if isinstance(v, (str, int, float, list, dict, type(None)))},
                "rows": json.loads(frame.to_json(orient="records"))}
        return json.dumps(data, indent=1, default=str) + "\n"
    from ecatlab.tables import render_table

    shown = frame.copy()
    shown.attrs = {"caption": header, "illustrative": "ILLUSTRATIVE" in header, "columns": frame.attrs.get("columns", {}) if isinstance(frame.attrs.get("columns"), dict) else {}}
    return render_table(shown, fmt, decimals=decimals, csv_comment=True, sep=sep)
