"""Write the ILLUSTRATIVE VASP-format example tree ``demo_data/dft_example``.

Nothing in the tree is a calculation. The total energies below are INVENTED numbers of a plausible
size, chosen so that the two hypothetical surfaces DEMO-A and DEMO-B behave differently in the
oxygen and hydrogen pathways; the frequencies are invented too. The atoms are placeholder fcc(111)
slabs (the file format needs element symbols and positions); they do not make these numbers
results for any real material. Do not cite them.

The tree follows the folder convention of ``ecatlab ingest`` (docs/ingestion.md)::

    dft_example/
      README.txt                 what this is (invented numbers)
      corrections.csv            invented ZPE, CpdT, TS (eV) for adsorbates without a vib/ run
      gas/H2/, gas/H2O/          reference molecules
      DEMO-A/slab/, OH/, O/, OOH/, H/     with vib/ runs (vasprun.xml <dynmat>) for OH, O, OOH
      DEMO-B/slab/, OH/, O/, OOH/, H/     with vib/ runs for OH (OUTCAR only) and OOH

The files are written by ``tests/fake_vasp.py`` (a test helper) and are byte-reproducible; a test
regenerates the tree and compares it with the committed copy.

Run from the repository root:  python demo_data/make_dft_example.py [TARGET_FOLDER]
"""

from __future__ import annotations

import pathlib
import sys

ROOT = pathlib.Path(__file__).resolve().parent / "dft_example"

#: INVENTED final total energies (eV, sigma -> 0) of every run. Not DFT results.
TOTALS = {
    ("gas", "H2"): -6.7700,
    ("gas", "H2O"): -14.2200,
    ("DEMO-A", "slab"): -72.0000,
    ("DEMO-A", "OH"): -82.3450,
    ("DEMO-A", "O"): -77.8100,
    ("DEMO-A", "OOH"): -86.6650,
    ("DEMO-A", "H"): -75.7350,
    ("DEMO-B", "slab"): -46.5000,
    ("DEMO-B", "OH"): -56.5350,
    ("DEMO-B", "O"): -51.6500,
    ("DEMO-B", "OOH"): -60.8450,
    ("DEMO-B", "H"): -49.7850,
}

#: INVENTED harmonic frequencies (cm^-1) of the adsorbates that have a vib/ run, and how it is stored.
VIBRATIONS = {
    ("DEMO-A", "OH"): ("vasprun", [3640.0, 770.0, 715.0, 400.0, 330.0, 95.0]),
    ("DEMO-A", "O"): ("vasprun", [470.0, 360.0, 345.0]),
    ("DEMO-A", "OOH"): ("vasprun", [3480.0, 1340.0, 910.0, 600.0, 430.0, 310.0, 220.0, 140.0, 75.0]),
    ("DEMO-B", "OH"): ("outcar", [3610.0, 690.0, 650.0, 380.0, 290.0, 110.0]),
    ("DEMO-B", "OOH"): ("vasprun", [3450.0, 1310.0, 880.0, 560.0, 400.0, 280.0, 190.0, 120.0, 80.0]),
}

#: INVENTED corrections (eV) for adsorbates without a vib/ run (O* on DEMO-B, H* on both).
CORRECTIONS = [("O*", 0.070, 0.030, 0.050), ("H*", 0.170, 0.010, 0.010)]

ADSORBATE_ATOMS = {"OH": ["O", "H"], "O": ["O"], "OOH": ["O", "O", "H"], "H": ["H"]}
SLABS = {"DEMO-A": (3, 3.92), "DEMO-B": (2, 3.92)}  # placeholder fcc(111) 2x2 slabs: layers, lattice constant (A)
DATE = "2025 01 15"

README = """ILLUSTRATIVE EXAMPLE -- INVENTED NUMBERS, NOT CALCULATIONS
===========================================================

This folder imitates the layout of a folder of VASP outputs so that the route
"folder of DFT outputs -> energy table -> limiting potentials -> report" of ecatlab
can be run and tested anywhere. Every energy and frequency in it is invented.
DEMO-A and DEMO-B are hypothetical surfaces; the atoms are placeholder slabs
needed by the file format, not models of a real material. Do not cite any
number from here or from results computed with it.

Layout (see docs/ingestion.md):
  gas/H2, gas/H2O            reference molecules
  DEMO-A/, DEMO-B/           one folder per surface: slab/ and one folder per adsorbate
  <adsorbate>/vib/           finite-difference runs (vasprun.xml <dynmat>, or OUTCAR only)
  corrections.csv            ZPE, CpdT, TS (eV) for adsorbates without a vib/ run

Regenerate with: python demo_data/make_dft_example.py
Route (from the repository root; the outputs go to a scratch folder, not into the checkout):
  ecatlab ingest demo_data/dft_example -o /tmp/ecatlab-dft/energies.csv --corrections demo_data/dft_example/corrections.csv
  ecatlab table /tmp/ecatlab-dft/energies.csv --pathway orr-4e oer-4e her-volmer-heyrovsky
  ecatlab report /tmp/ecatlab-dft/energies.csv --pathway orr-4e oer-4e her-volmer-heyrovsky -o /tmp/ecatlab-dft/report.html
Every output carries the ILLUSTRATIVE label (energy table comment and provenance column, table
captions, report banner).
"""


def write_tree(root: str | pathlib.Path = ROOT) -> pathlib.Path:
    """Write the example tree under ``root`` (files are overwritten); returns ``root``."""
    tests = str(pathlib.Path(__file__).resolve().parents[1] / "tests")
    if tests not in sys.path:  # the fake-VASP writer is a test helper, not part of the package
        sys.path.insert(0, tests)
    from fake_vasp import add_adsorbate, fcc111_slab, molecule_in_box, write_outcar_modes, write_run, write_vib_run

    root = pathlib.Path(root)
    root.mkdir(parents=True, exist_ok=True)
    (root / "README.txt").write_text(README)
    lines = ["# INVENTED corrections (eV) for the illustrative example; not computed, do not cite", "species,ZPE,CpdT,TS"]
    lines += [f"{sp},{zpe:.3f},{cpdt:.3f},{ts:.3f}" for sp, zpe, cpdt, ts in CORRECTIONS]
    (root / "corrections.csv").write_text("\n".join(lines) + "\n")
    write_run(root / "gas" / "H2", molecule_in_box(["H", "H"], 0.74), TOTALS[("gas", "H2")], date=DATE)
    write_run(root / "gas" / "H2O", molecule_in_box(["O", "H", "H"], 0.97), TOTALS[("gas", "H2O")], date=DATE)
    for surface, (layers, a) in SLABS.items():
        slab = fcc111_slab("Pt", a=a, size=(2, 2, layers), vacuum=6.0)
        write_run(root / surface / "slab", slab, TOTALS[(surface, "slab")], date=DATE)
        for name, atoms in ADSORBATE_ATOMS.items():
            structure = add_adsorbate(slab, atoms)
            energy = TOTALS[(surface, name)]
            write_run(root / surface / name, structure, energy, date=DATE)
            kind, freqs = VIBRATIONS.get((surface, name), (None, None))
            if kind == "vasprun":
                write_vib_run(root / surface / name / "vib", structure, energy, freqs, len(atoms), date=DATE)
            elif kind == "outcar":
                write_outcar_modes(root / surface / name / "vib" / "OUTCAR", freqs)
    return root


if __name__ == "__main__":
    target = write_tree(sys.argv[1] if len(sys.argv) > 1 else ROOT)
    size = sum(p.stat().st_size for p in target.rglob("*") if p.is_file())
    print(f"wrote the ILLUSTRATIVE example tree to {target} ({size / 1024:.0f} KB; invented numbers)")
