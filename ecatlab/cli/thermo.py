"""``ecatlab thermo``: ZPE / CpdT / TS / G-correction of an adsorbate or gas from its frequencies."""

from __future__ import annotations

import argparse
import re

__all__ = ["register", "run"]


def register(subparsers) -> None:
    p = subparsers.add_parser(
        "thermo",
        help="thermochemical corrections (ZPE, CpdT, TS, G) from vibrational frequencies",
        description=(
            "Harmonic-adsorbate corrections from a list of frequencies, or ideal-gas corrections of a molecule "
            "of the built-in library (--gas). Energies in eV."
        ),
    )
    p.add_argument("frequencies", nargs="*", help="frequencies (negative = imaginary), or a text file with one per line/comma")
    p.add_argument("--unit", required=False, choices=["cm^-1", "cm-1", "meV", "THz"], help="unit of the frequencies (required with frequencies)")
    p.add_argument("-T", "--temperature", type=float, nargs="+", default=[298.15], help="temperature(s) in K (default 298.15)")
    p.add_argument("--species", default="adsorbate", help="name used in messages and the table")
    p.add_argument("--imaginary", choices=["raise", "drop", "flip"], default="raise", help="imaginary-mode policy (default raise)")
    p.add_argument("--low-frequency", choices=["harmonic", "cutoff", "quasi-rrho"], default="harmonic",
                   help="soft-mode treatment (default harmonic)")
    p.add_argument("--cutoff", type=float, default=50.0, help="cutoff in cm^-1 for --low-frequency cutoff (default 50)")
    p.add_argument("--gas", help="a built-in gas molecule instead of frequencies, e.g. H2O or H2O(l)")
    p.add_argument("--pressure", type=float, default=1.0, help="gas pressure in bar (default 1; H2O(l) uses 0.035)")
    p.set_defaults(func=run)


def _read_frequencies(items: list[str]) -> list[float]:
    from pathlib import Path

    from ecatlab.errors import ThermochemistryError

    values: list[float] = []
    for item in items:
        tokens = [item]
        if Path(item).is_file():
            tokens = [t for t in re.split(r"[\s,;]+", Path(item).read_text()) if t]
        for t in tokens:
            for piece in (x for x in t.split(",") if x):
                try:
                    values.append(float(piece))
                except ValueError:
                    raise ThermochemistryError(f"{piece!r} is not a frequency (from {item!r}); give numbers") from None
    return values


def run(args: argparse.Namespace) -> int:
    import pandas as pd

    from ecatlab.errors import ThermochemistryError
    from ecatlab.thermochemistry import HarmonicAdsorbate, LowFrequencyTreatment

    treatment = LowFrequencyTreatment(method=args.low_frequency, cutoff_cm=args.cutoff)
    rows = []
    if args.gas:
        if args.frequencies:
            raise ThermochemistryError("give either frequencies or --gas, not both")
        from ecatlab.molecules import reference_corrections

        key = args.gas if "(" in args.gas else f"{args.gas}(g)"
        for t in args.temperature:
            table = reference_corrections([key], t, pressure_bar=args.pressure)
            r = table.iloc[0]
            rows.append({"species": key, "T_K": t, "p_bar": r["pressure_bar"], "ZPE": r["ZPE"], "CpdT": r["CpdT"],
                         "TS": r["TS"], "G_correction": r["G_correction"], "sigma": r["symmetry_number"]})
        notes = [f"{key}: point group {table.iloc[0]['point_group']}, {table.iloc[0]['treatment']}"]
    else:
        if not args.frequencies:
            raise ThermochemistryError("no frequencies given; pass numbers or a file, with --unit")
        if not args.unit:
            raise ThermochemistryError("frequencies need a declared unit: --unit cm^-1, meV or THz")
        model = HarmonicAdsorbate.from_frequencies(
            _read_frequencies(args.frequencies), args.unit, species=args.species,
            imaginary=args.imaginary, low_frequency=treatment,
        )
        for t in args.temperature:
            c = model.correction(t)
            rows.append({"species": args.species, "T_K": t, "ZPE": c.zpe, "CpdT": c.heat_integral, "TS": c.ts,
                         "G_correction": c.free_energy_correction})
        notes = [treatment.describe(), f"imaginary modes: {args.imaginary}"] + [c.describe() for c in model.mode_changes]
    frame = pd.DataFrame(rows)
    with pd.option_context("display.float_format", "{:.4f}".format, "display.width", 120):
        print(frame.to_string(index=False))
    print("# energies in eV; " + "; ".join(notes))
    return 0
