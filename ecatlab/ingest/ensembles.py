"""Readers for energy ensembles: BEEF-vdW ensembles from VASP OUTCAR files, deviation files.

BEEF-vdW ensembles
------------------
With the ensemble requested (``LBEEFENS = .TRUE.`` with ``GGA = BF``), VASP prints after the
final energy a block headed ``BEEFens <K> ensemble energies`` followed by K numbers (eV), the
energies of the K ensemble functionals evaluated non-self-consistently on the BEEF-vdW density
(Wellendorff et al., Phys. Rev. B 85, 235149 (2012)). The header text is recalled from memory of
VASP output; :func:`read_beef_ensemble` accepts the numbers one or several per line and reads the
last block of the file (the converged ionic step). Whether the numbers are total energies or
perturbations of the self-consistent energy does not matter here: every structure's values are
centred on their ensemble mean, and only the member-by-member differences are used.

From structures to adsorbate deviations (reference molecules included)
----------------------------------------------------------------------
For adsorbate X* on surface s, member k, with the reference-balance coefficients n_i of X
(:meth:`ecatlab.references.ReferenceScheme.balance`, the same balance the energy table uses):

.. math::

    \\Delta E_k(X^*) = E_k(s{+}X) - E_k(s) - \\sum_i n_i E_k(\\mathrm{ref}_i), \\qquad
    \\delta_k(X^*) = \\Delta E_k(X^*) - \\overline{\\Delta E(X^*)}

(Medford et al., J. Catal. 309, 397 (2014): the ensemble of adsorption energies). Member k is the
same functional in every term, so the correlations through shared references and slabs are kept.
Non-reference molecules (a DFT CO(g), say) get the same treatment without the slab.

Deviation files
---------------
* CSV or Parquet, long form: columns ``surface``, ``species``, ``member`` (integer 0..K-1) and
  ``deviation`` (eV, deviation of the member from the table value). Rows for non-reference
  molecules leave ``surface`` empty. Every (surface, species) needs every member once. In CSV,
  lines starting with ``#`` are comments.
* NPZ: arrays ``deviations`` (K, n_surfaces, n_species, eV), ``surfaces``, ``species``, and
  optionally ``molecule_deviations`` (K, n_molecules) and ``molecules``.
"""

from __future__ import annotations

import io
import os
import re
from pathlib import Path
from typing import Mapping

import numpy as np
import pandas as pd

from ecatlab.errors import IngestError, NotationError, ReferenceSchemeError
from ecatlab.notation import Species
from ecatlab.references import ReferenceScheme

__all__ = [
    "read_beef_ensemble",
    "ensemble_from_structures",
    "ensemble_from_vasp_tree",
    "read_deviations",
    "write_deviations",
    "DEVIATION_COLUMNS",
]

#: Columns of a long deviation file.
DEVIATION_COLUMNS: dict[str, str] = {
    "surface": "surface name (empty for a non-reference molecule)",
    "species": "adsorbate (X*) or molecule (X(g), X(l), X(aq)) in ecatlab notation",
    "member": "ensemble member index 0..K-1 (the same functional for every row with this index)",
    "deviation": "member value minus the energy table's value [eV]",
}

_HEADER = re.compile(r"BEEFens\s+(\d+)\s+ensemble\s+energies", re.IGNORECASE)
_NUMBER = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)([EeDd][+-]?\d+)?$")


def read_beef_ensemble(path: str | os.PathLike) -> np.ndarray:
    """The ensemble energies (eV) of the last BEEF ensemble block of a VASP OUTCAR.

    Parameters
    ----------
    path : path to an OUTCAR (or a folder containing one)

    Returns
    -------
    ndarray (K,), eV.

    Raises
    ------
    IngestError
        No block (the ensemble was not requested), a block with fewer numbers than announced,
        or a number that cannot be read (naming the line).
    """
    p = Path(path)
    if p.is_dir():
        p = p / "OUTCAR"
    if not p.is_file():
        raise IngestError(str(p), "OUTCAR not found; give the OUTCAR of a run with the BEEF ensemble (LBEEFENS = .TRUE.)")
    lines = p.read_text(errors="replace").splitlines()
    starts = [(i, int(m.group(1))) for i, line in enumerate(lines) if (m := _HEADER.search(line))]
    if not starts:
        raise IngestError(str(p), "no 'BEEFens ... ensemble energies' block; run with GGA = BF and LBEEFENS = .TRUE. to get the ensemble")
    first, k = starts[-1]
    if k < 2:
        raise IngestError(str(p), f"line {first + 1}: the ensemble block announces {k} members; need at least 2")
    values: list[float] = []
    i = first + 1
    while len(values) < k and i < len(lines):
        tokens = lines[i].split()
        if not tokens:
            i += 1
            continue
        for tok in tokens:
            if not _NUMBER.match(tok):
                raise IngestError(str(p), f"line {i + 1}: {tok!r} in the ensemble block is not a number ({len(values)} of {k} read)")
            values.append(float(tok.replace("D", "E").replace("d", "e")))
        i += 1
    if len(values) < k:
        raise IngestError(str(p), f"the ensemble block at line {first + 1} announces {k} energies but the file ends after {len(values)}")
    out = np.array(values[:k])
    if not np.all(np.isfinite(out)):
        raise IngestError(str(p), "the ensemble block holds non-finite energies")
    return out


def _as_members(values, label: str) -> np.ndarray:
    arr = np.asarray(values, dtype=float).ravel()
    if arr.size < 2 or not np.all(np.isfinite(arr)):
        raise IngestError(label, f"needs at least 2 finite ensemble energies, got {arr.size}")
    return arr


def ensemble_from_structures(
    adsorbed: Mapping[tuple[str, str], np.ndarray],
    clean: Mapping[str, np.ndarray],
    molecules: Mapping[str, np.ndarray],
    scheme: ReferenceScheme | None = None,
    source: str = "<structures>",
):
    """Adsorbate (and molecule) deviations per member from ensemble energies of structures.

    Parameters
    ----------
    adsorbed : mapping (surface, adsorbate key) -> array (K,)
        Ensemble energies (eV) of slab + adsorbate.
    clean : mapping surface -> array (K,)
        Ensemble energies (eV) of the clean slab.
    molecules : mapping molecule key -> array (K,)
        Ensemble energies (eV) of the gas-phase molecules; must include every reference molecule
        the adsorbates need (e.g. ``"H2(g)"``, ``"H2O(l)"`` computed as the gas). Others (e.g.
        ``"CO(g)"``) become molecule deviations.
    scheme : ReferenceScheme, optional
        Reference molecules and balance (default H2(g), H2O(l), CO2(g), N2(g)).

    Returns
    -------
    EnsembleErrors
        With ``notes`` saying how the deviations were formed. Cells (surface, species) without a
        structure are NaN (pathways needing them give NaN).
    """
    from ecatlab.uncertainty.models import EnsembleErrors

    scheme = scheme or ReferenceScheme()
    mols = {}
    for key, vals in molecules.items():
        try:
            sp = Species.parse(key)
        except NotationError as exc:
            raise IngestError(source, f"molecule {key!r}: {exc.reason}") from None
        if not sp.is_molecule:
            raise IngestError(source, f"{key!r} is not a molecule; give gas-phase species as e.g. 'H2(g)'")
        mols[sp.key] = _as_members(vals, f"{source}: {key}")
    sizes = {v.size for v in mols.values()} | {_as_members(v, f"{source}: {s}").size for s, v in clean.items()}
    sizes |= {_as_members(v, f"{source}: {k}").size for k, v in adsorbed.items()}
    if len(sizes) != 1:
        raise IngestError(source, f"the structures carry ensembles of different sizes {sorted(sizes)}; all must come from the same ensemble")
    (K,) = sizes
    surfaces = list(dict.fromkeys(s for s, _ in adsorbed))
    species = list(dict.fromkeys(Species.parse(sp).key for _, sp in adsorbed))
    missing_slabs = [s for s in surfaces if s not in clean]
    if missing_slabs:
        raise IngestError(source, f"no clean-slab ensemble for surface(s) {missing_slabs}")

    def referenced(elements: Mapping[str, float], what: str) -> np.ndarray:
        try:
            coef = scheme.balance(elements)
        except ReferenceSchemeError as exc:
            raise IngestError(source, f"{what}: {exc}") from None
        total = np.zeros(K)
        for ref, n in coef.items():
            if abs(n) < 1e-12:
                continue
            if ref not in mols:
                raise IngestError(source, f"{what} needs the ensemble of reference molecule {ref}; add its OUTCAR (gas/{Species.parse(ref).formula}/)")
            total += n * mols[ref]
        return total

    dev = np.full((K, len(surfaces), len(species)), np.nan)
    for (surface, key), vals in adsorbed.items():
        sp = Species.parse(key)
        de = _as_members(vals, f"{source}: {surface}/{key}") - _as_members(clean[surface], f"{source}: {surface}") - referenced(sp.elements, f"{surface}/{sp.key}")
        dev[:, surfaces.index(surface), species.index(sp.key)] = de - de.mean()
    other = [m for m in mols if m not in scheme.references]
    mdev = np.zeros((K, len(other)))
    for j, m in enumerate(other):
        de = mols[m] - referenced(Species.parse(m).elements, m)
        mdev[:, j] = de - de.mean()
    notes = (
        f"{K} members; adsorbate deviations = E_k(slab+X) - E_k(slab) - sum_i n_i E_k(ref_i), centred on the member mean",
        f"reference molecules folded in member by member: {', '.join(r for r in scheme.references if r in mols)}",
    )
    return EnsembleErrors(dev, tuple(surfaces), tuple(species), mdev, tuple(other), source, notes)


def ensemble_from_vasp_tree(root: str | os.PathLike, scheme: ReferenceScheme | None = None):
    """BEEF ensembles of a VASP folder tree laid out as for :func:`ecatlab.energy_table_from_vasp`.

    Reads ``OUTCAR`` next to each run: ``ROOT/gas/<formula>/OUTCAR`` (the folder ``H2O`` is used for
    H2O(l), other gases as ``<formula>(g)``), ``ROOT/<surface>/slab/OUTCAR`` and
    ``ROOT/<surface>/<adsorbate>/OUTCAR``; vibration sub-folders are not read. Returns
    :class:`~ecatlab.uncertainty.EnsembleErrors` (see :func:`ensemble_from_structures`).
    """
    scheme = scheme or ReferenceScheme()
    base = Path(root)
    if not base.is_dir():
        raise IngestError(str(base), "folder not found; give the root of the DFT output tree")
    liquids = {Species.parse(r).formula: r for r in scheme.references if Species.parse(r).phase == "l"}
    molecules = {}
    gas = base / "gas"
    if gas.is_dir():
        for sub in sorted(p for p in gas.iterdir() if p.is_dir()):
            key = liquids.get(sub.name, f"{sub.name}(g)")
            molecules[key] = read_beef_ensemble(sub)
    clean, adsorbed = {}, {}
    for surface_dir in sorted(p for p in base.iterdir() if p.is_dir() and p.name != "gas" and not p.name.startswith(".")):
        if not (surface_dir / "slab").is_dir():
            raise IngestError(str(surface_dir), "no 'slab/' folder with the clean-slab run; every surface folder needs one")
        clean[surface_dir.name] = read_beef_ensemble(surface_dir / "slab")
        for d in sorted(p for p in surface_dir.iterdir() if p.is_dir() and p.name != "slab"):
            label = d.name if d.name.endswith("*") else d.name + "*"
            try:
                key = Species.parse(label).key
            except NotationError as exc:
                raise IngestError(str(d), f"folder name is not an adsorbate formula ({exc.reason})") from None
            adsorbed[(surface_dir.name, key)] = read_beef_ensemble(d)
    if not adsorbed:
        raise IngestError(str(base), "no adsorbate folders with an OUTCAR found (expected ROOT/<surface>/<adsorbate>/OUTCAR)")
    return ensemble_from_structures(adsorbed, clean, molecules, scheme, source=str(base))


def _read_csv_lines(path: Path) -> tuple[pd.DataFrame, np.ndarray]:
    raw = path.read_text().splitlines()
    keep = [i for i, line in enumerate(raw) if line.strip() and not line.lstrip().startswith("#")]
    if not keep:
        raise IngestError(str(path), "empty deviation file")
    frame = pd.read_csv(io.StringIO("\n".join(raw[i] for i in keep)), dtype={"surface": str, "species": str}, keep_default_na=False)
    return frame, np.array(keep[1:]) + 1  # file line number of every data row


def read_deviations(path: str | os.PathLike, center: bool = False):
    """Read an ensemble of deviations from a CSV, Parquet or NPZ file (formats in the module docstring).

    Parameters
    ----------
    path : path
    center : bool
        Subtract each (surface, species)'s member mean (use when the file holds member values
        rather than deviations from the table).

    Returns
    -------
    EnsembleErrors
    """
    from ecatlab.uncertainty.models import EnsembleErrors

    p = Path(path)
    if not p.is_file():
        raise IngestError(str(p), "deviation file not found")
    suffix = p.suffix.lower()
    if suffix == ".npz":
        with np.load(p, allow_pickle=False) as data:
            for name in ("deviations", "surfaces", "species"):
                if name not in data:
                    raise IngestError(str(p), f"NPZ file lacks the array {name!r}; it needs deviations, surfaces, species")
            dev = np.array(data["deviations"], dtype=float)
            surfaces = [str(s) for s in data["surfaces"]]
            species = [str(s) for s in data["species"]]
            mdev = np.array(data["molecule_deviations"], dtype=float) if "molecule_deviations" in data else None
            mols = [str(s) for s in data["molecules"]] if "molecules" in data else []
        if center:
            dev = dev - np.nanmean(dev, axis=0, keepdims=True)
            mdev = None if mdev is None else mdev - mdev.mean(axis=0, keepdims=True)
        try:
            return EnsembleErrors(dev, tuple(surfaces), tuple(species), mdev, tuple(mols), str(p), ("read from NPZ",))
        except Exception as exc:  # noqa: BLE001 - re-raised with the file name
            raise IngestError(str(p), str(exc)) from None
    if suffix in (".csv", ".txt"):
        frame, lines = _read_csv_lines(p)
        where = lambda r: f"line {lines[r]}"  # noqa: E731
    elif suffix in (".parquet", ".pq"):
        frame = pd.read_parquet(p)
        where = lambda r: f"row {r}"  # noqa: E731
    else:
        raise IngestError(str(p), f"unknown deviation file type {suffix!r}; use .csv, .parquet or .npz")
    frame.columns = [str(c).strip().lower() for c in frame.columns]
    missing = [c for c in DEVIATION_COLUMNS if c not in frame.columns]
    if missing:
        raise IngestError(str(p), f"missing column(s) {missing}; a deviation file needs {list(DEVIATION_COLUMNS)}")
    dvals = pd.to_numeric(frame["deviation"], errors="coerce").to_numpy(dtype=float)
    bad = np.flatnonzero(~np.isfinite(dvals))
    if bad.size:
        raise IngestError(str(p), f"{where(bad[0])}, column 'deviation': {frame['deviation'].iloc[bad[0]]!r} is not a finite number of eV")
    members = pd.to_numeric(frame["member"], errors="coerce").to_numpy(dtype=float)
    bad = np.flatnonzero(~np.isfinite(members) | (members < 0) | (members != np.round(members)))
    if bad.size:
        raise IngestError(str(p), f"{where(bad[0])}, column 'member': {frame['member'].iloc[bad[0]]!r} is not a member index 0, 1, 2...")
    members = members.astype(int)
    codes, uniques = pd.factorize(frame["species"].astype(str).str.strip())
    unique_keys = []
    for u, text in enumerate(uniques):  # parse each distinct label once
        try:
            unique_keys.append(Species.parse(text).key)
        except NotationError as exc:
            r = int(np.flatnonzero(codes == u)[0])
            raise IngestError(str(p), f"{where(r)}, column 'species': {exc.reason}") from None
    keys = list(np.array(unique_keys, dtype=object)[codes])
    surf = frame["surface"].fillna("").astype(str).str.strip().to_numpy()
    is_mol = np.array([Species.parse(k).is_molecule for k in unique_keys], dtype=bool)[codes]
    for r in np.flatnonzero(is_mol & (surf != "")):
        raise IngestError(str(p), f"{where(r)}: molecule {keys[r]} has a surface {surf[r]!r}; leave 'surface' empty for molecules")
    for r in np.flatnonzero(~is_mol & (surf == "")):
        raise IngestError(str(p), f"{where(r)}: adsorbate {keys[r]} needs a surface")
    K = int(members.max()) + 1
    key_arr = np.array(keys, dtype=object)
    cell = pd.Series(surf, dtype=object) + "/" + pd.Series(key_arr, dtype=object)  # "surface/species"; "/O2(g)" for molecules
    dup = pd.DataFrame({"cell": cell, "member": members}).duplicated()
    if dup.any():
        r = int(np.flatnonzero(dup.to_numpy())[0])
        raise IngestError(str(p), f"{where(r)}: member {members[r]} of {surf[r] or '-'}/{keys[r]} is given twice")
    counts = cell.value_counts()
    short = counts[counts != K]
    if len(short):
        name = short.index[0]
        raise IngestError(str(p), f"{name.lstrip('/')} has {short.iloc[0]} members but the file has {K} (0..{K - 1}); give every member of every cell")
    ads = ~is_mol
    surfaces = list(dict.fromkeys(surf[ads]))
    species = list(dict.fromkeys(key_arr[ads]))
    dev = np.full((K, len(surfaces), len(species)), np.nan)
    si = pd.Index(surfaces).get_indexer(surf[ads])
    ji = pd.Index(species).get_indexer(key_arr[ads])
    dev[members[ads], si, ji] = dvals[ads]
    mols = list(dict.fromkeys(key_arr[is_mol]))
    mdev = np.zeros((K, len(mols)))
    if mols:
        mdev[members[is_mol], pd.Index(mols).get_indexer(key_arr[is_mol])] = dvals[is_mol]
    if center:
        dev = dev - np.nanmean(dev, axis=0, keepdims=True)
        mdev = mdev - mdev.mean(axis=0, keepdims=True)
    return EnsembleErrors(dev, tuple(surfaces), tuple(species), mdev, tuple(mols), str(p),
                          (f"read from {p.name}" + ("; centred on the member mean" if center else ""),))


def write_deviations(ensemble, path: str | os.PathLike, force: bool = False) -> Path:
    """Write an ensemble as a long CSV/Parquet file or an NPZ file (by suffix); refuses to
    overwrite without ``force``; written atomically through :func:`ecatlab.safe_io.atomic_path`
    (a failed write leaves the old file intact); CSV text cells are neutralised against formula
    injection (:func:`ecatlab.safe_io.csv_text`)."""
    from ecatlab import safe_io

    p = Path(path)
    suffix = p.suffix.lower()
    if suffix not in (".npz", ".parquet", ".pq", ".csv", ".txt"):
        raise IngestError(str(p), f"unknown deviation file type {suffix!r}; use .csv, .parquet or .npz")
    if p.exists() and not force:
        raise IngestError(str(p), "file exists; pass force=True (CLI: --force) to overwrite it")
    K, S, A = ensemble.deviations.shape
    with safe_io.atomic_path(p, force=force, what="deviation file") as tmp:
        if suffix == ".npz":
            with open(tmp, "wb") as fh:
                np.savez(fh, deviations=ensemble.deviations, surfaces=np.array(ensemble.surfaces), species=np.array(ensemble.species),
                         molecule_deviations=ensemble.molecule_deviations, molecules=np.array(ensemble.molecules, dtype=str))
        else:
            k, s, a = np.meshgrid(np.arange(K), np.arange(S), np.arange(A), indexing="ij")
            ok = np.isfinite(ensemble.deviations)
            frame = pd.DataFrame({
                "surface": np.array(ensemble.surfaces, dtype=object)[s[ok]],
                "species": np.array(ensemble.species, dtype=object)[a[ok]],
                "member": k[ok], "deviation": ensemble.deviations[ok],
            })
            if ensemble.molecules:
                km, jm = np.meshgrid(np.arange(K), np.arange(len(ensemble.molecules)), indexing="ij")
                frame = pd.concat([frame, pd.DataFrame({"surface": "", "species": np.array(ensemble.molecules, dtype=object)[jm.ravel()],
                                                        "member": km.ravel(), "deviation": ensemble.molecule_deviations.ravel()})], ignore_index=True)
            if suffix in (".parquet", ".pq"):
                frame.to_parquet(tmp, index=False)
            else:
                text = safe_io.comment_lines([f"ensemble deviations [eV]; source: {ensemble.source}"])
                text += safe_io.csv_text(frame, index=False, float_format="%.10g")
                with open(tmp, "w", encoding="utf-8", newline="") as fh:
                    fh.write(text)
    return p
