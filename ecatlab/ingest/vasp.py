"""Read VASP results with :mod:`pymatgen.io.vasp` and turn a folder tree into an energy table.

Folder convention (names are yours; the layout is fixed)::

    ROOT/
      gas/                      reference molecules, one folder per formula
        H2/vasprun.xml
        H2O/vasprun.xml         (used for H2O(l): the liquid enters through the corrections)
      Pt111/                    one folder per surface; the folder name is the surface label
        slab/vasprun.xml        the clean slab (reserved name "slab")
        OH/vasprun.xml          adsorbate OH* (folder name = adsorbate formula; a trailing * is allowed)
        OH/vib/vasprun.xml      optional finite-difference / DFPT run of the same adsorbate
                                (IBRION 5-8, only the adsorbate's atoms free); OUTCAR also read

Energies are read from ``vasprun.xml`` (or ``vasprun.xml.gz``) with ``Vasprun.final_energy``,
which pymatgen defines as the sigma -> 0 energy (``e_0_energy``); the key is recorded in the
``energy_key`` column. A run that pymatgen reports unconverged (electronic or ionic) is an error.

Vibrations: the eigenvalues of the mass-weighted Hessian in ``vasprun.xml`` (``<dynmat>``) are
converted to frequencies, ``nu~ = sqrt(-lambda) / (2 pi c)`` with lambda in eV/(A^2 amu)
(VASP stores stable modes as negative eigenvalues; a positive one is an imaginary mode and is
returned as a negative frequency). With only an OUTCAR, the ``f =`` / ``f/i=`` lines of the first
"Eigenvectors and eigenvalues of the dynamical matrix" block are parsed; both routes give the
same numbers on the same run (tested).
"""

from __future__ import annotations

import math
import os
import re
import warnings
from dataclasses import dataclass
from pathlib import Path
from typing import Mapping

import numpy as np

from ecatlab.constants import ANGSTROM_M, ATOMIC_MASS_KG, ELEMENTARY_CHARGE, SPEED_OF_LIGHT_CM
from ecatlab.errors import IngestError

__all__ = [
    "VaspRun",
    "VaspModes",
    "read_vasp_run",
    "read_vasp_modes",
    "outcar_frequencies_cm",
    "dynmat_eigenvalues_to_cm",
    "scan_vasp_tree",
    "GAS_FOLDER",
    "SLAB_FOLDER",
    "VIB_FOLDER",
]

GAS_FOLDER = "gas"
SLAB_FOLDER = "slab"
VIB_FOLDER = "vib"
_VASPRUN_NAMES = ("vasprun.xml", "vasprun.xml.gz")

#: VASP GGA tags -> functional names (INCAR GGA, case-insensitive).
_GGA_NAMES = {"PE": "PBE", "RP": "RPBE", "PS": "PBEsol", "91": "PW91", "BF": "BEEF-vdW", "RE": "revPBE",
              "OR": "optPBE-vdW", "BO": "optB88-vdW", "MK": "optB86b-vdW", "AM": "AM05", "CA": "LDA"}


@dataclass(frozen=True)
class VaspRun:
    """Final energy and provenance of one VASP run.

    Attributes
    ----------
    path : str
        The vasprun.xml file.
    energy_ev : float
        ``Vasprun.final_energy`` (sigma -> 0), eV.
    energy_key : str
    elements : dict
        Element counts of the final structure.
    n_atoms : int
    functional : str
        From INCAR GGA / METAGGA, else the POTCAR family, else ``"unknown"``.
    date : str
        Run date from the vasprun generator block (``YYYY-MM-DD``), else the file date.
    """

    path: str
    energy_ev: float
    energy_key: str
    elements: dict
    n_atoms: int
    functional: str
    date: str
    free_atoms: int | None = None


@dataclass(frozen=True)
class VaspModes:
    """Vibrational frequencies of a finite-difference / DFPT run.

    Attributes
    ----------
    path : str
    frequencies_cm : tuple of float
        Signed wavenumbers in cm^-1 (negative = imaginary), in file order.
    displaced_atoms : int
        Number of atoms whose displacements entered (3 modes each).
    route : str
        ``"vasprun.xml dynmat"`` or ``"OUTCAR f/f/i lines"``.
    """

    path: str
    frequencies_cm: tuple[float, ...]
    displaced_atoms: int
    route: str

    @property
    def imaginary(self) -> tuple[float, ...]:
        """The imaginary modes (as negative numbers, cm^-1)."""
        return tuple(f for f in self.frequencies_cm if f < 0)


# ---------------------------------------------------------------------------------------------
def _find_vasprun(folder: Path) -> Path | None:
    for name in _VASPRUN_NAMES:
        if (folder / name).is_file():
            return folder / name
    return None


def _load_vasprun(path: Path):
    from pymatgen.io.vasp import Vasprun

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return Vasprun(
                str(path), parse_dos=False, parse_eigen=False, parse_projected_eigen=False, parse_potcar_file=False,
                exception_on_bad_xml=True,
            )
    except Exception as exc:  # pymatgen raises many types on broken files
        from ecatlab.errors import clip

        raise IngestError(str(path), f"pymatgen cannot read this vasprun.xml ({type(exc).__name__}: {clip(exc, 160)}); "
                          "is the run finished and the file complete?") from None


def _functional(vr) -> str:
    incar = {str(k).upper(): v for k, v in dict(vr.incar).items()}
    meta = str(incar.get("METAGGA", "") or "").strip()
    if meta and meta.upper() not in ("--", "NONE", "FALSE"):
        return meta.upper()
    gga = str(incar.get("GGA", "") or "").strip().upper()
    if gga and gga != "--":
        name = _GGA_NAMES.get(gga, gga)
        ivdw = incar.get("IVDW")
        return name + (f" + IVDW={ivdw}" if ivdw not in (None, 0, "0") else "")
    symbols = list(getattr(vr, "potcar_symbols", []) or [])
    if symbols:
        family = symbols[0].split()[0]
        return f"{family.replace('PAW_', '')} (POTCAR default)"
    return "unknown"


def _date(vr, path: Path) -> str:
    raw = str(getattr(vr, "generator", {}).get("date", "")).strip()
    m = re.match(r"(\d{4})\s+(\d{1,2})\s+(\d{1,2})", raw)
    if m:
        return f"{int(m.group(1)):04d}-{int(m.group(2)):02d}-{int(m.group(3)):02d}"
    import datetime

    return datetime.date.fromtimestamp(path.stat().st_mtime).isoformat() + " (file date)"


def read_vasp_run(location: str | os.PathLike, *, require_converged: bool = True) -> VaspRun:
    """Final energy of a VASP run from its ``vasprun.xml``.

    Parameters
    ----------
    location : path
        A folder containing ``vasprun.xml``/``vasprun.xml.gz``, or the file itself.
    require_converged : bool
        If True (default), an electronically or ionically unconverged run (as reported by
        pymatgen's ``Vasprun.converged_electronic`` / ``converged_ionic``) raises.

    Raises
    ------
    IngestError
        Missing file, unreadable file, unconverged run, no energy; the message names the path.
    """
    loc = Path(location)
    path = _find_vasprun(loc) if loc.is_dir() else loc
    if path is None or not path.is_file():
        raise IngestError(str(loc), "no vasprun.xml (or vasprun.xml.gz) found; energies are read from vasprun.xml")
    vr = _load_vasprun(path)
    if not vr.ionic_steps:
        raise IngestError(str(path), "no ionic step in this vasprun.xml; the run did not finish a single step")
    if require_converged:
        if not vr.converged_electronic:
            raise IngestError(str(path), "the last electronic step did not converge (pymatgen: converged_electronic is False); "
                              "rerun with more NELM or a better mixer")
        if not vr.converged_ionic:
            raise IngestError(str(path), "the ionic relaxation did not converge (pymatgen: converged_ionic is False); "
                              "continue the relaxation from CONTCAR")
    energy = float(vr.final_energy)
    if not math.isfinite(energy):
        raise IngestError(str(path), "pymatgen found no total energy in this run")
    structure = vr.final_structure
    elements = {str(el): float(n) for el, n in structure.composition.get_el_amt_dict().items()}
    free = None
    sd = vr.initial_structure.site_properties.get("selective_dynamics")
    if sd is not None:
        free = int(sum(1 for flags in sd if any(bool(x) for x in flags)))
    return VaspRun(
        path=str(path),
        energy_ev=energy,
        energy_key="Vasprun.final_energy = e_0_energy (sigma -> 0)",
        elements=elements,
        n_atoms=len(structure),
        functional=_functional(vr),
        date=_date(vr, path),
        free_atoms=free,
    )


def dynmat_eigenvalues_to_cm(eigenvalues) -> np.ndarray:
    """Signed wavenumbers (cm^-1) from VASP dynamical-matrix eigenvalues in eV/(A^2 amu).

    ``omega = sqrt(-lambda e / (A^2 amu))`` (rad/s), ``nu~ = omega / (2 pi c)``; a positive
    eigenvalue gives an imaginary mode, returned negative. 1 sqrt(eV/(A^2 amu)) = 521.47 cm^-1.
    """
    lam = np.asarray(eigenvalues, dtype=float)
    scale = math.sqrt(ELEMENTARY_CHARGE / (ANGSTROM_M**2 * ATOMIC_MASS_KG)) / (2.0 * math.pi * SPEED_OF_LIGHT_CM)
    return -np.sign(lam) * np.sqrt(np.abs(lam)) * scale


_OUTCAR_MODE = re.compile(r"^\s*(\d+)\s+f(/i)?\s*=\s*[-\d.Ee+]+\s+THz\s+[-\d.Ee+]+\s+2PiTHz\s+([-\d.Ee+]+)\s+cm-1")


def outcar_frequencies_cm(path: str | os.PathLike) -> np.ndarray:
    """Signed wavenumbers (cm^-1) from the ``f =`` / ``f/i=`` lines of a VASP OUTCAR.

    Only the first "Eigenvectors and eigenvalues of the dynamical matrix" block is read (VASP
    prints the modes again after division by sqrt(mass)); ``f/i=`` lines are imaginary modes and
    are returned negative.
    """
    p = Path(path)
    if not p.is_file():
        raise IngestError(str(p), "OUTCAR not found")
    import gzip

    opener = gzip.open if p.suffix == ".gz" else open
    try:
        with opener(p, "rb") as fh:
            data = fh.read()
    except (OSError, EOFError) as exc:  # a broken .gz
        raise IngestError(str(p), f"cannot read this file ({type(exc).__name__}: {exc}); is it a complete OUTCAR?") from None
    if bytes(1) in data[:65536]:
        raise IngestError(str(p), "binary file (NUL bytes), not a VASP OUTCAR text file; give the OUTCAR of the vibration run")
    lines = data.decode("utf-8", errors="replace").splitlines()
    start = next((i for i, line in enumerate(lines) if "Eigenvectors and eigenvalues of the dynamical matrix" in line), None)
    if start is None:
        raise IngestError(str(p), "no 'Eigenvectors and eigenvalues of the dynamical matrix' block; "
                          "is this a finite-difference (IBRION=5/6) or DFPT (IBRION=7/8) run?")
    freqs: list[tuple[int, float]] = []
    for line in lines[start + 1:]:
        if "Eigenvectors" in line:
            break
        m = _OUTCAR_MODE.match(line)
        if m:
            value = float(m.group(3))
            freqs.append((int(m.group(1)), -value if m.group(2) else value))
    if not freqs:
        raise IngestError(str(p), "the dynamical-matrix block has no 'f =' lines")
    numbers = [n for n, _ in freqs]
    if numbers != list(range(1, len(numbers) + 1)):
        raise IngestError(str(p), f"mode numbers in the dynamical-matrix block are not 1..N ({numbers[:5]}...); truncated file?")
    return np.array([f for _, f in freqs], dtype=float)


def read_vasp_modes(location: str | os.PathLike) -> VaspModes:
    """Vibrational frequencies from a finite-difference / DFPT folder (vasprun.xml, else OUTCAR).

    With selective dynamics only the free atoms are displaced and ``3 * N_free`` modes appear
    (pymatgen issue 3084); that count is checked against the selective-dynamics flags. IBRION=6
    ignores selective dynamics, which shows up here as a count mismatch.

    Raises
    ------
    IngestError
        No vasprun.xml/OUTCAR with modes, or a mode count that does not match the free atoms.
    """
    loc = Path(location)
    folder = loc if loc.is_dir() else loc.parent
    vasprun = _find_vasprun(folder) if loc.is_dir() else (loc if loc.name.startswith("vasprun") else None)
    if vasprun is not None:
        vr = _load_vasprun(vasprun)
        eig = getattr(vr, "normalmode_eigenvals", None)
        if eig is not None and len(eig):
            freqs = dynmat_eigenvalues_to_cm(eig)
            n_disp = len(freqs) // 3
            sd = vr.initial_structure.site_properties.get("selective_dynamics")
            if sd is not None:
                n_free = sum(1 for flags in sd if any(bool(x) for x in flags))
                if n_free * 3 != len(freqs):
                    raise IngestError(
                        str(vasprun),
                        f"{len(freqs)} modes but {n_free} atoms are free under selective dynamics (expected {3 * n_free}); "
                        "IBRION=6 ignores selective dynamics -- rerun with IBRION=5 and only the adsorbate free",
                    )
            return VaspModes(str(vasprun), tuple(float(f) for f in freqs), n_disp, "vasprun.xml dynmat")
    for name in ("OUTCAR", "OUTCAR.gz"):
        outcar = folder / name
        if outcar.is_file():
            freqs = outcar_frequencies_cm(outcar)
            return VaspModes(str(outcar), tuple(float(f) for f in freqs), len(freqs) // 3, "OUTCAR f/f/i lines")
    raise IngestError(str(loc), "no vibrational modes found: need a vasprun.xml with a <dynmat> block or an OUTCAR "
                      "from an IBRION=5-8 run")


# ---------------------------------------------------------------------------------------------
def _adsorbate_label(folder_name: str) -> str:
    return folder_name if folder_name.endswith("*") else folder_name + "*"


def scan_vasp_tree(root: str | os.PathLike, *, require_converged: bool = True) -> dict:
    """Find and read every run of a folder tree that follows the convention above.

    Returns
    -------
    dict
        ``{"molecules": {formula: VaspRun}, "slabs": {surface: VaspRun},
        "adsorbates": [(surface, species_key, VaspRun, VaspModes | None)]}``.
    """
    from ecatlab.errors import NotationError
    from ecatlab.notation import Species

    base = Path(root)
    if not base.is_dir():
        raise IngestError(str(base), "folder not found; give the root of the DFT output tree")
    molecules: dict[str, VaspRun] = {}
    gas_dir = base / GAS_FOLDER
    if gas_dir.is_dir():
        for sub in sorted(p for p in gas_dir.iterdir() if p.is_dir()):
            molecules[sub.name] = read_vasp_run(sub, require_converged=require_converged)
    slabs: dict[str, VaspRun] = {}
    adsorbates = []
    for surface_dir in sorted(p for p in base.iterdir() if p.is_dir() and p.name != GAS_FOLDER and not p.name.startswith(".")):
        subdirs = sorted(p for p in surface_dir.iterdir() if p.is_dir())
        if not any(d.name == SLAB_FOLDER for d in subdirs):
            raise IngestError(str(surface_dir), f"no '{SLAB_FOLDER}/' folder with the clean-slab run; every surface folder needs one")
        slabs[surface_dir.name] = read_vasp_run(surface_dir / SLAB_FOLDER, require_converged=require_converged)
        for d in subdirs:
            if d.name == SLAB_FOLDER:
                continue
            try:
                sp = Species.parse(_adsorbate_label(d.name))
            except NotationError as exc:
                raise IngestError(str(d), f"folder name is not an adsorbate formula ({exc.reason}); rename it, e.g. 'OOH'") from None
            run = read_vasp_run(d, require_converged=require_converged)
            modes = read_vasp_modes(d / VIB_FOLDER) if (d / VIB_FOLDER).is_dir() else None
            adsorbates.append((surface_dir.name, sp.key, run, modes))
    if not adsorbates:
        raise IngestError(str(base), "no adsorbate folders found (expected ROOT/<surface>/<adsorbate>/vasprun.xml)")
    return {"molecules": molecules, "slabs": slabs, "adsorbates": adsorbates}


def check_atom_balance(surface: str, species_key: str, run: VaspRun, slab: VaspRun) -> None:
    """Raise if slab+adsorbate minus slab does not have exactly the adsorbate's atoms."""
    from ecatlab.notation import Species

    expected = Species.parse(species_key).elements
    diff = {el: run.elements.get(el, 0.0) - slab.elements.get(el, 0.0) for el in set(run.elements) | set(slab.elements)}
    diff = {el: n for el, n in diff.items() if abs(n) > 1e-9}
    if {k: v for k, v in expected.items() if abs(v) > 0} != diff:
        raise IngestError(
            run.path,
            f"atoms do not match: this run ({run.n_atoms} atoms, {_fmt(run.elements)}) minus the clean slab "
            f"{slab.path} ({slab.n_atoms} atoms, {_fmt(slab.elements)}) leaves {_fmt(diff) or 'nothing'}, "
            f"but {species_key} is {_fmt(expected)}; use the same slab model for both runs or rename the folder",
        )


def _fmt(elements: Mapping[str, float]) -> str:
    return " ".join(f"{el}{n:g}" for el, n in sorted(elements.items()))
