"""``ecatlab thermo``: ZPE / CpdT / TS / G-correction of an adsorbate or gas from its frequencies."""

from __future__ import annotations

import argparse
import os
import re

from ecatlab.cli import _options as opt
from ecatlab.errors import clip, clip_path

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
    opt.add_conditions(p, pH=False, scale_=False, multi_temperature=True)
    p.add_argument("--species", default="adsorbate", help="name used in messages and the table")
    p.add_argument("--imaginary", choices=["raise", "drop", "flip"], default="raise", help="imaginary-mode policy (default raise)")
    p.add_argument("--low-frequency", choices=["harmonic", "cutoff", "quasi-rrho"], default="harmonic",
                   help="soft-mode treatment (default harmonic)")
    p.add_argument("--cutoff", type=opt.positive_float, default=50.0, help="cutoff in cm^-1 for --low-frequency cutoff (default 50)")
    p.add_argument("--gas", help="a built-in gas molecule instead of frequencies, e.g. H2O or H2O(l)")
    p.add_argument("--pressure", type=opt.positive_float, default=1.0, help="gas pressure in bar (default 1; H2O(l) uses 0.035)")
    opt.add_output(p, "CSV file to write the table to (.csv)")
    p.set_defaults(func=run)


_FREQUENCY_FILE_LIMIT = 1_000_000  # bytes; a frequency list is a few hundred numbers


def _read_frequency_file(path) -> str:
    from ecatlab.errors import ThermochemistryError

    shown = clip_path(str(path))
    if path.stat().st_size > _FREQUENCY_FILE_LIMIT:
        raise ThermochemistryError(f"{shown}: {path.stat().st_size} bytes is too large for a frequency list (limit {_FREQUENCY_FILE_LIMIT})")
    data = path.read_bytes()
    if bytes(1) in data:
        raise ThermochemistryError(f"{shown}: binary file (NUL byte at offset {data.find(bytes(1))}); give a text file of numbers, one per line or comma-separated")
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise ThermochemistryError(f"{shown}: not UTF-8 text (byte offset {exc.start}); give a text file of numbers") from None


def _read_frequencies(items: list[str]) -> list[float]:
    import math
    from pathlib import Path

    from ecatlab.errors import ThermochemistryError

    values: list[float] = []
    for item in items:
        tokens = [item]
        source = ""
        if Path(item).is_file():
            tokens = [t for t in re.split(r"[\s,;]+", _read_frequency_file(Path(item))) if t]
            source = f" in file {clip_path(item)}"
        for t in tokens:
            for piece in (x for x in t.split(",") if x):
                try:
                    value = float(piece)
                except ValueError:
                    hint = " (a file of that name does not exist)" if not source and ("/" in piece or "." in piece.strip("0123456789.-+eE")) else ""
                    raise ThermochemistryError(f"{clip(piece)!r} is not a frequency{source or f' (from {clip(item)!r})'}{hint}; give numbers") from None
                if not math.isfinite(value):
                    raise ThermochemistryError(f"{clip(piece)!r}{source}: frequencies must be finite numbers")
                values.append(value)
    return values


def run(args: argparse.Namespace) -> int:
    target = opt.output_target(args, ("csv", "tsv"), [f for f in args.frequencies if os.path.isfile(f)], what="CSV file")

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
    note = "# energies in eV; " + "; ".join(notes)
    if target is not None:
        from ecatlab.safe_io import write_csv

        write_csv(frame, target, header_lines=[note], force=args.force, index=False, float_format="%.6f")
        print(f"wrote {len(frame)} rows to {target}")
        return 0
    with pd.option_context("display.float_format", "{:.4f}".format, "display.width", 120):
        print(frame.to_string(index=False))
    print(note)
    return 0
