"""ASE route (optional extra ``ecatlab[ase]``): total energies from ASE-readable files or an ASE
database, then the same composition balance as every other route.

ASE database convention: every row carries the key-value pairs ``surface`` (empty for molecules)
and ``species`` (``OH*`` adsorbate, ``*`` clean slab, ``H2O(g)`` molecule) and a stored energy
(``row.energy``, eV, as written by the calculator). For single files, :func:`read_ase_energy`
returns ``atoms.get_potential_energy()`` (ASE's default energy; for VASP files the sigma -> 0
value) and the element counts.
"""

from __future__ import annotations

import os
from pathlib import Path

import pandas as pd

from ecatlab.errors import IngestError

__all__ = ["read_ase_energy", "totals_from_ase_database", "energy_table_from_ase"]


def _require_ase():
    try:
        import ase  # noqa: F401
    except ImportError:  # pragma: no cover - depends on the environment
        raise IngestError("<ase>", "the ASE route needs the optional extra: pip install 'ecatlab[ase]'") from None


def read_ase_energy(path: str | os.PathLike, index: int | str = -1) -> tuple[float, dict[str, float]]:
    """Energy (eV) and element counts of one ASE-readable structure with stored energy."""
    _require_ase()
    import ase.io

    p = Path(path)
    if not p.is_file():
        raise IngestError(str(p), "file not found")
    try:
        atoms = ase.io.read(str(p), index=index)
    except Exception as exc:
        raise IngestError(str(p), f"ASE cannot read this file ({type(exc).__name__}: {exc})") from None
    try:
        energy = float(atoms.get_potential_energy())
    except Exception:
        raise IngestError(str(p), "the file stores no energy (ASE found no calculator results)") from None
    from pymatgen.core import Composition

    counts = {str(el): float(n) for el, n in Composition(atoms.get_chemical_formula()).get_el_amt_dict().items()}
    return energy, counts


def totals_from_ase_database(path: str | os.PathLike) -> pd.DataFrame:
    """Table of total energies (surface, species, total_energy, source) from an ASE database."""
    _require_ase()
    import ase.db

    p = Path(path)
    if not p.is_file():
        raise IngestError(str(p), "ASE database not found")
    rows = []
    with ase.db.connect(str(p)) as db:
        for row in db.select():
            kv = row.key_value_pairs
            if "species" not in kv:
                raise IngestError(str(p), f"row id={row.id} lacks the key 'species' (and 'surface'); see ecatlab.ingest.ase_files")
            energy = row.get("energy")
            if energy is None:
                raise IngestError(str(p), f"row id={row.id} ({kv['species']}) stores no energy")
            rows.append({"surface": str(kv.get("surface", "")), "species": str(kv["species"]),
                         "total_energy": float(energy), "source": f"{p}#id={row.id}"})
    if not rows:
        raise IngestError(str(p), "the database has no rows")
    return pd.DataFrame(rows)


def energy_table_from_ase(path, *, references=None, zero_corrections: bool = False) -> pd.DataFrame:
    """Energy table (surface, species, E, ZPE, CpdT, TS, source) from an ASE database."""
    from ecatlab.ingest.totals import adsorption_energies

    if not zero_corrections:
        raise IngestError(str(path), "the ASE route gives electronic energies only; pass zero_corrections=True "
                          "(--zero-corrections) and add ZPE/CpdT/TS, or use the VASP route with vib/ runs")
    frame = adsorption_energies(totals_from_ase_database(path), references)
    for c in ("ZPE", "CpdT", "TS"):
        frame[c] = 0.0
    frame["corrections_note"] = "set to 0 (zero_corrections)"
    return frame
