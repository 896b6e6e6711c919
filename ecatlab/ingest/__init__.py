"""From DFT outputs to the energy table the CHE engine reads.

* :func:`adsorption_energies` -- a table of total energies (surface, species, total_energy) to
  electronic adsorption energies ``E`` against the reference molecules.
* :func:`energy_table_from_vasp` -- a folder tree of VASP runs (see :mod:`ecatlab.ingest.vasp`
  for the layout) to a long table with ``surface, species, E, ZPE, CpdT, TS`` and provenance
  columns, ready for :func:`ecatlab.energies.read_energies`.
* :mod:`ecatlab.ingest.ase_files` -- the same from ASE-readable files or an ASE database
  (optional extra ``ecatlab[ase]``).

All composition bookkeeping goes through :meth:`ecatlab.references.ReferenceScheme.balance`,
the balance the engine uses, so ``E`` and the engine's reference corrections match term by term.
"""

from __future__ import annotations

import os
from typing import Mapping

import pandas as pd

from ecatlab.errors import IngestError, ThermochemistryError
from ecatlab.ingest.totals import adsorption_energies, adsorption_energy, reference_totals_by_key
from ecatlab.ingest.vasp import (
    VaspModes,
    VaspRun,
    check_atom_balance,
    dynmat_eigenvalues_to_cm,
    outcar_frequencies_cm,
    read_vasp_modes,
    read_vasp_run,
    scan_vasp_tree,
)

__all__ = [
    "adsorption_energies",
    "adsorption_energy",
    "energy_table_from_vasp",
    "vibrational_corrections",
    "read_vasp_run",
    "read_vasp_modes",
    "outcar_frequencies_cm",
    "dynmat_eigenvalues_to_cm",
    "VaspRun",
    "VaspModes",
    "ENERGY_TABLE_COLUMNS",
    "illustrative_label",
]

#: Columns written by the ingestion routes, in order (provenance columns follow the energies).
ENERGY_TABLE_COLUMNS = (
    "surface", "species", "E", "ZPE", "CpdT", "TS",
    "source", "slab_source", "vibrations_source", "functional", "date", "energy_key", "corrections_note",
)


def vibrational_corrections(
    frequencies_cm,
    temperature: float,
    *,
    species: str,
    imaginary: str = "raise",
    low_frequency=None,
) -> tuple[dict[str, float], str]:
    """ZPE, CpdT, TS (eV) of an adsorbate from signed frequencies in cm^-1, plus a note saying
    which policies were applied and which modes were changed."""
    from ecatlab.thermochemistry import HarmonicAdsorbate

    model = HarmonicAdsorbate.from_frequencies(
        frequencies_cm, "cm^-1", species=species, imaginary=imaginary, low_frequency=low_frequency
    )
    corr = model.correction(temperature)
    note = f"harmonic adsorbate at {float(temperature):g} K; {model.low_frequency.describe()}; imaginary modes: {imaginary}"
    if corr.mode_changes:
        note += "; changed: " + "; ".join(c.describe() for c in corr.mode_changes)
    return {"ZPE": corr.zpe, "CpdT": float(corr.heat_integral), "TS": float(corr.ts)}, note


def _correction_table(corrections) -> dict[str, dict[str, float]]:
    if corrections is None:
        return {}
    from ecatlab.errors import NotationError
    from ecatlab.notation import Species

    frame = corrections if isinstance(corrections, pd.DataFrame) else None
    label = "<DataFrame>"
    if frame is None:
        label = os.fspath(corrections)
        if not os.path.isfile(label):
            raise IngestError(label, "corrections file not found; expected CSV with columns species, ZPE, CpdT, TS (eV)")
        try:
            frame = pd.read_csv(label, comment="#", skipinitialspace=True)
        except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError) as exc:
            from ecatlab.errors import clip

            raise IngestError(label, f"not a readable CSV table ({clip(str(exc).strip(), 160)}); "
                              "expected UTF-8 CSV with columns species, ZPE, CpdT, TS (eV)") from None
    missing = [c for c in ("species", "ZPE", "CpdT", "TS") if c not in frame.columns]
    if missing:
        raise IngestError(label, f"corrections table lacks column(s) {missing}; expected species, ZPE, CpdT, TS (eV)")
    out = {}
    for i, row in frame.reset_index(drop=True).iterrows():
        try:
            values = {c: float(row[c]) for c in ("ZPE", "CpdT", "TS")}
        except (TypeError, ValueError):
            raise IngestError(label, f"data row {i + 1}: ZPE, CpdT and TS must be numbers of eV") from None
        if any(v != v for v in values.values()):
            raise IngestError(label, f"data row {i + 1}: empty ZPE, CpdT or TS")
        if any(v in (float("inf"), float("-inf")) for v in values.values()):
            raise IngestError(label, f"data row {i + 1}: ZPE, CpdT and TS must be finite numbers of eV")
        try:
            key = Species.parse(str(row["species"]).strip()).key
        except NotationError as exc:
            raise IngestError(label, f"data row {i + 1}, column species: {exc}") from None
        out[key] = values
    return out


#: Files at the root of a tree whose first non-blank line may carry the ILLUSTRATIVE label.
_README_NAMES = ("README.txt", "README.md", "README")


def illustrative_label(root: str | os.PathLike) -> str:
    """The ILLUSTRATIVE label of a folder tree of invented example data, or ``""``.

    A tree is illustrative when the first non-blank line of its ``README.txt`` / ``README.md`` /
    ``README`` (at the root) contains the word ``ILLUSTRATIVE`` in capitals (as the bundled
    ``demo_data/dft_example`` does). The label is that line, e.g.
    ``"ILLUSTRATIVE EXAMPLE -- INVENTED NUMBERS, NOT CALCULATIONS"``.
    """
    folder = os.fspath(root)
    if not os.path.isdir(folder):
        return ""
    for name in _README_NAMES:
        path = os.path.join(folder, name)
        if not os.path.isfile(path):
            continue
        try:
            with open(path, encoding="utf-8", errors="replace") as fh:
                for _, line in zip(range(50), fh):
                    if line.strip():
                        text = line.strip().lstrip("#").strip()
                        return text[:200] if "ILLUSTRATIVE" in text else ""
        except OSError:
            return ""
    return ""


def energy_table_from_vasp(
    root: str | os.PathLike,
    *,
    references=None,
    temperature: float = 298.15,
    imaginary: str = "raise",
    low_frequency=None,
    corrections=None,
    zero_corrections: bool = False,
    require_converged: bool = True,
) -> pd.DataFrame:
    """Energy table (surface, species, E, ZPE, CpdT, TS + provenance) from a VASP folder tree.

    ``E = E_tot(slab+X) - E_tot(slab) - sum_i n_i E_tot(ref_i)`` (eV), with the reference
    coefficients of :meth:`ReferenceScheme.balance`; ZPE, CpdT, TS (eV) of the adsorbate from its
    ``vib/`` run (harmonic model at ``temperature``), else from ``corrections`` (CSV or DataFrame
    with species, ZPE, CpdT, TS), else 0 if ``zero_corrections`` -- which is recorded.

    Parameters
    ----------
    root : path
        Root of the tree (``gas/``, one folder per surface).
    references : ReferenceScheme or list of str, optional
    temperature : float
        K, for the adsorbates' vibrational corrections (use the same T in the analysis).
    imaginary : {"raise", "drop", "flip"}
        Policy for imaginary adsorbate modes (the choice and the modes touched are recorded).
    low_frequency : LowFrequencyTreatment or {"harmonic", "cutoff", "quasi-rrho"}, optional
    corrections : path or DataFrame, optional
        Per-species ZPE/CpdT/TS for adsorbates without a ``vib/`` run.
    zero_corrections : bool
        Write 0 for adsorbates with neither (recorded in ``corrections_note``).
    require_converged : bool
        Reject runs pymatgen reports unconverged (default True).

    Returns
    -------
    DataFrame
        Columns :data:`ENERGY_TABLE_COLUMNS`; a tree of invented example data
        (:func:`illustrative_label`) adds a ``provenance`` column holding its ILLUSTRATIVE label
        on every row (and ``attrs["illustrative"]``), so the label travels with the energies
        into every table and report made from them.

    Raises
    ------
    IngestError
        Naming the path: missing files, unconverged runs, atom mismatch between slab and
        slab+adsorbate, compositions the references cannot build, missing corrections.
    """
    from ecatlab.ingest.totals import _scheme

    scheme = _scheme(references)
    tree = scan_vasp_tree(root, require_converged=require_converged)
    table = _correction_table(corrections)
    molecule_totals = reference_totals_by_key({k: v.energy_ev for k, v in tree["molecules"].items()}, scheme)
    molecule_paths = {}
    for formula, run in tree["molecules"].items():
        for key, value in reference_totals_by_key({formula: 0.0}, scheme).items():
            molecule_paths[key] = run.path
    rows = []
    lacking = []
    for surface, key, run, modes in tree["adsorbates"]:
        slab = tree["slabs"][surface]
        check_atom_balance(surface, key, run, slab)
        from ecatlab.notation import Species

        e, coefficients = adsorption_energy(
            run.energy_ev, slab.energy_ev, Species.parse(key).elements, molecule_totals, scheme, where=run.path
        )
        used_refs = [f"{k}: {molecule_paths[k]}" for k, n in coefficients.items() if abs(n) > 0]
        if modes is not None:
            try:
                corr, note = vibrational_corrections(
                    modes.frequencies_cm, temperature, species=f"{key} on {surface}",
                    imaginary=imaginary, low_frequency=low_frequency,
                )
            except ThermochemistryError as exc:
                raise IngestError(modes.path, str(exc)) from None
            n_ads = int(sum(Species.parse(key).elements.values()))
            if modes.displaced_atoms != n_ads:
                note += f"; note: {modes.displaced_atoms} atoms displaced for a {n_ads}-atom adsorbate"
            vib_source = modes.path
        elif key in table:
            corr, note, vib_source = table[key], "from the corrections table", "corrections table"
        elif zero_corrections:
            corr, note, vib_source = {"ZPE": 0.0, "CpdT": 0.0, "TS": 0.0}, "set to 0 (zero_corrections)", ""
        else:
            lacking.append(f"{surface}/{key}")
            continue
        rows.append({
            "surface": surface, "species": key, "E": e, **corr,
            "source": run.path, "slab_source": slab.path, "vibrations_source": vib_source,
            "functional": run.functional, "date": run.date, "energy_key": run.energy_key,
            "corrections_note": note + "; references: " + "; ".join(used_refs),
        })
    if lacking:
        raise IngestError(
            str(root),
            f"no vibrational corrections for {', '.join(lacking[:8])}{' ...' if len(lacking) > 8 else ''}: add a vib/ run "
            "in each adsorbate folder, give a corrections table (species, ZPE, CpdT, TS in eV), or accept zeros explicitly "
            "(zero_corrections=True / --zero-corrections)",
        )
    frame = pd.DataFrame(rows, columns=list(ENERGY_TABLE_COLUMNS))
    label = illustrative_label(root)
    if label:
        frame["provenance"] = label
        frame.attrs["illustrative"] = label
    return frame
