"""``ecatlab ingest``: a folder of DFT outputs (or a table of total energies) to an energy table."""

from __future__ import annotations

import argparse
from pathlib import Path

from ecatlab.cli import _options as opt
from ecatlab.errors import clip_path

__all__ = ["register", "run"]


def register(subparsers) -> None:
    p = subparsers.add_parser(
        "ingest",
        help="DFT outputs -> energy table (surface, species, E, ZPE, CpdT, TS + provenance)",
        description=(
            "Read a VASP folder tree (ROOT/gas/<formula>/, ROOT/<surface>/slab/, ROOT/<surface>/<adsorbate>/[vib/]) "
            "or a CSV of total energies (surface, species, total_energy), and write the energy table that "
            "'ecatlab table' reads. See docs/ingestion.md."
        ),
    )
    p.add_argument("source", help="root folder of VASP runs, or a CSV of total energies")
    p.add_argument("-o", "--output", required=True, metavar="FILE",
                   help="CSV file to write (.csv); an existing file is kept unless --force is given; missing folders are created")
    p.add_argument("--force", action="store_true", help="replace the output file if it exists (never an input file)")
    p.add_argument("--references", nargs="+", help="reference molecules (default H2(g) H2O(l) CO2(g) N2(g))")
    p.add_argument("-T", "--temperature", type=opt.temperature, default=298.15, metavar="K", help="K, for adsorbate vibrational corrections (default 298.15)")
    p.add_argument("--imaginary", choices=["raise", "drop", "flip"], default="raise", help="imaginary-mode policy (default raise)")
    p.add_argument("--low-frequency", choices=["harmonic", "cutoff", "quasi-rrho"], default="harmonic")
    p.add_argument("--cutoff", type=opt.positive_float, default=50.0, help="cm^-1, for --low-frequency cutoff")
    p.add_argument("--corrections", help="CSV species,ZPE,CpdT,TS (eV) for adsorbates without a vib/ run")
    p.add_argument("--zero-corrections", action="store_true", help="write 0 corrections where none are available (recorded)")
    p.add_argument("--allow-unconverged", action="store_true", help="accept runs pymatgen reports unconverged")
    p.add_argument("--format", choices=["vasp", "totals", "ase"], help="input kind (default: folder -> vasp, .csv -> totals, else ase)")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    from ecatlab.errors import IngestError
    from ecatlab.safe_io import check_output
    from ecatlab.thermochemistry import LowFrequencyTreatment

    src = Path(args.source)
    if not src.exists():
        raise IngestError(clip_path(str(src)), "file or folder not found; give the root folder of VASP runs, a CSV of total energies "
                                          "(surface, species, total_energy) or a file ASE can read")
    if args.corrections and not Path(args.corrections).is_file():
        raise IngestError(clip_path(args.corrections), "--corrections file not found; expected CSV with columns species, ZPE, CpdT, TS (eV)")
    out = check_output(args.output, force=args.force, inputs=[src, args.corrections], suffixes=("csv",), what="energy table")
    kind = args.format or ("vasp" if src.is_dir() else "totals" if src.suffix.lower() == ".csv" else "ase")
    treatment = LowFrequencyTreatment(method=args.low_frequency, cutoff_cm=args.cutoff)
    refs = tuple(args.references) if args.references else None
    if kind == "vasp":
        from ecatlab.ingest import energy_table_from_vasp

        frame = energy_table_from_vasp(
            src, references=refs, temperature=args.temperature, imaginary=args.imaginary, low_frequency=treatment,
            corrections=args.corrections, zero_corrections=args.zero_corrections,
            require_converged=not args.allow_unconverged,
        )
    elif kind == "totals":
        from ecatlab.ingest import adsorption_energies

        frame = adsorption_energies(src, refs)
        if not {"ZPE", "CpdT", "TS"} <= set(frame.columns):
            if args.zero_corrections:
                for c in ("ZPE", "CpdT", "TS"):
                    frame[c] = 0.0
                frame["corrections_note"] = "set to 0 (--zero-corrections)"
            else:
                raise IngestError(str(src), "no ZPE, CpdT, TS columns; add them (eV) or pass --zero-corrections")
        frame["source"] = frame.get("source", str(src))
    else:
        from ecatlab.ingest.ase_files import energy_table_from_ase

        frame = energy_table_from_ase(src, references=refs, zero_corrections=args.zero_corrections)
    from ecatlab.safe_io import write_csv

    label = frame.attrs.get("illustrative") or ""
    header = [f"{label}: every number below is invented; do not cite." if label else ""]
    write_csv(frame, out, header_lines=[h for h in header if h], force=args.force, inputs=[src, args.corrections], index=False,
              float_format="%.6f")
    print(f"wrote {len(frame)} rows ({frame['surface'].nunique()} surfaces) to {out}")
    return 0
