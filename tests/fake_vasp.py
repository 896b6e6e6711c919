"""Test helper (not part of the ecatlab package): writes minimal VASP-format files with invented
numbers, for tests and examples; never real calculations.

The files carry just enough of the ``vasprun.xml`` / ``OUTCAR`` formats for
:mod:`pymatgen.io.vasp` and :mod:`ecatlab.ingest.vasp` to read them: the generator block (date),
INCAR tags, the atoms, the initial/final structures, one ``<calculation>`` per ionic step with a
few electronic steps and the sigma -> 0 energy, and optionally a ``<dynmat>`` block. Energies and
frequencies are whatever the caller passes: they are never the result of a calculation.

Used by the ingestion tests and by ``demo_data/make_dft_example.py`` (the ILLUSTRATIVE
``demo_data/dft_example`` tree). Output is deterministic (fixed number formats, no time stamps
other than the ``date`` argument, negative zeros written as zeros), so a regenerated tree is
byte-identical whatever the versions of ase/pymatgen that built the placeholder geometries.

ase and pymatgen are imported lazily (only :func:`fcc111_slab` needs ase).
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Sequence

import numpy as np

from ecatlab.constants import ANGSTROM_M, ATOMIC_MASS_KG, ELEMENTARY_CHARGE, SPEED_OF_LIGHT_CM

__all__ = [
    "write_vasprun",
    "dynmat_block",
    "write_outcar_modes",
    "cm_to_eigenvalue",
    "fcc111_slab",
    "molecule_in_box",
    "add_adsorbate",
    "write_run",
    "write_vib_run",
]


def _no_negative_zero(x, fmt: str):
    """``x``, or 0.0 when it would print as a negative zero ("-0.00000000" depends on round-off)."""
    text = fmt.format(x)
    return 0.0 if text.strip().lstrip("-").strip("0.") == "" and text.strip().startswith("-") else x


def _varray(name, rows, fmt="{: .8f}") -> str:
    out = [f'  <varray name="{name}">'] if name else ["  <varray>"]
    for r in rows:
        out.append("   <v>" + " ".join(fmt.format(_no_negative_zero(x, fmt)) for x in r) + " </v>")
    out.append("  </varray>")
    return "\n".join(out)


def _structure(name, lattice, frac, selective) -> str:
    sel = ""
    if selective is not None:
        flags = "\n".join("   <v>" + " ".join("T" if x else "F" for x in r) + " </v>" for r in selective)
        sel = '  <varray name="selective" type="logical">\n' + flags + "\n  </varray>"
    return "\n".join([
        f' <structure name="{name}">' if name else " <structure>",
        "  <crystal>", _varray("basis", lattice), "  </crystal>",
        _varray("positions", frac),
        sel,
        " </structure>",
    ])


def _energy_block(e: float, indent: str) -> str:
    return (f'{indent}<energy>\n{indent} <i name="e_fr_energy"> {e + 0.001:.8f} </i>\n'
            f'{indent} <i name="e_wo_entrp"> {e - 0.001:.8f} </i>\n{indent} <i name="e_0_energy"> {e:.8f} </i>\n{indent}</energy>')


def write_vasprun(
    path,
    symbols: Sequence[str],
    lattice,
    frac,
    energies: Sequence[float],
    *,
    nelm: int = 60,
    scf_steps: int = 8,
    ibrion: int = 2,
    nsw: int = 100,
    selective=None,
    dynmat: str | None = None,
    gga: str = "PE",
    date: str = "2024 03 05",
    time: str = "10:11:12",
) -> Path:
    """Write a minimal ``vasprun.xml`` with one ``<calculation>`` per entry of ``energies`` (eV).

    The last energy is the final sigma -> 0 energy (``e_0_energy``); ``e_fr_energy`` and
    ``e_wo_entrp`` are offset by +-1 meV. ``scf_steps >= nelm`` makes the run electronically
    unconverged (pymatgen's test); ``len(energies) >= nsw`` with ``ibrion`` in 1-3 makes it ionically
    unconverged. ``selective`` (one T/F triple per atom) adds selective dynamics; ``dynmat`` is a
    block from :func:`dynmat_block`, placed in the last calculation.
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    symbols = list(symbols)
    types = list(dict.fromkeys(symbols))
    n = len(symbols)
    calcs = []
    for k, e in enumerate(energies):
        sc = "\n".join("  <scstep>\n" + _energy_block(e, "   ") + "\n  </scstep>" for _ in range(scf_steps))
        block = dynmat if (dynmat and k == len(energies) - 1) else ""
        calcs.append("\n".join([" <calculation>", sc, _structure(None, lattice, frac, selective),
                                _varray("forces", [[0, 0, 0]] * n), _energy_block(e, "  "), block, " </calculation>"]))
    atoms = "\n".join(f"    <rc><c>{s:2s}</c><c>{types.index(s) + 1}</c></rc>" for s in symbols)
    atomtypes = "\n".join(
        f"    <rc><c>{symbols.count(t)}</c><c>{t}</c><c>1.0</c><c>0.0</c><c>  PAW_PBE {t} 08Apr2002</c></rc>" for t in types
    )
    text = f"""<?xml version="1.0" encoding="ISO-8859-1"?>
<modeling>
 <generator>
  <i name="program" type="string">vasp </i>
  <i name="version" type="string">6.3.2  </i>
  <i name="subversion" type="string">(build Jan 1 2023) complex parallel</i>
  <i name="platform" type="string">LinuxIFC </i>
  <i name="date" type="string">{date} </i>
  <i name="time" type="string">{time} </i>
 </generator>
 <incar>
  <i type="string" name="GGA">{gga}</i>
  <i type="int" name="IBRION">{ibrion}</i>
  <i type="int" name="NSW">{nsw}</i>
  <i name="ENCUT">400.0</i>
 </incar>
 <parameters>
  <separator name="electronic">
   <i type="int" name="NELM">{nelm}</i>
   <i type="int" name="ISPIN">1</i>
   <i type="logical" name="LHFCALC">F</i>
   <i name="AEXX">0.0</i>
   <i name="HFSCREEN">0.0</i>
  </separator>
  <separator name="ionic">
   <i type="int" name="IBRION">{ibrion}</i>
   <i type="int" name="NSW">{nsw}</i>
  </separator>
 </parameters>
 <atominfo>
  <atoms>{n}</atoms>
  <types>{len(types)}</types>
  <array name="atoms">
   <dimension dim="1">ion</dimension>
   <field type="string">element</field>
   <field type="int">atomtype</field>
   <set>
{atoms}
   </set>
  </array>
  <array name="atomtypes">
   <dimension dim="1">type</dimension>
   <field type="int">atomspertype</field>
   <field type="string">element</field>
   <field>mass</field>
   <field>valence</field>
   <field type="string">pseudopotential</field>
   <set>
{atomtypes}
   </set>
  </array>
 </atominfo>
{_structure("initialpos", lattice, frac, selective)}
{chr(10).join(calcs)}
{_structure("finalpos", lattice, frac, selective)}
</modeling>
"""
    path.write_text(text)
    return path


def dynmat_block(eigenvalues: Sequence[float], n_free: int) -> str:
    """A ``<dynmat>`` block with the given eigenvalues (eV/(A^2 amu); negative = real mode) for
    ``n_free`` displaced atoms (diagonal Hessian, unit eigenvectors)."""
    n = 3 * n_free
    return "\n".join([
        " <dynmat>",
        _varray("hessian", np.diag(np.asarray(eigenvalues, dtype=float))),
        '  <v name="eigenvalues">' + " ".join(f"{x: .8f}" for x in eigenvalues) + " </v>",
        _varray("eigenvectors", np.eye(n)),
        " </dynmat>",
    ])


def write_outcar_modes(path, freqs_cm: Sequence[float]) -> Path:
    """An OUTCAR fragment with the dynamical-matrix block (``f =`` / ``f/i=`` lines; negative
    input = imaginary) followed by VASP's second, mass-divided block (which readers must skip)."""
    lines = [" Eigenvectors and eigenvalues of the dynamical matrix", " ----------------------------------------------------", ""]
    for i, f in enumerate(freqs_cm, start=1):
        thz = abs(f) * SPEED_OF_LIGHT_CM / 1e12
        tag = "f/i=" if f < 0 else "f  ="
        lines += [f"  {i:3d} {tag} {thz:11.6f} THz {2 * math.pi * thz:11.6f} 2PiTHz {abs(f):11.6f} cm-1 {abs(f) * 0.1239842:11.6f} meV",
                  "             X         Y         Z           dx          dy          dz",
                  "      0.000000  0.000000  2.000000     0.000000    0.000000    1.000000", ""]
    lines += [" Eigenvectors after division by SQRT(mass)", "", " Eigenvectors and eigenvalues of the dynamical matrix",
              "   1 f  =    1.000000 THz    6.283185 2PiTHz   33.356410 cm-1     4.135667 meV"]
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text("\n".join(lines) + "\n")
    return path


def cm_to_eigenvalue(freqs_cm) -> np.ndarray:
    """VASP dynamical-matrix eigenvalues (eV/(A^2 amu)) from signed wavenumbers (cm^-1).

    ``lambda = -sign(nu~) (2 pi c nu~)^2 A^2 amu / e``: stable modes negative, imaginary
    (negative input) positive -- the inverse of :func:`ecatlab.ingest.vasp.dynmat_eigenvalues_to_cm`.
    """
    f = np.asarray(freqs_cm, dtype=float)
    omega = 2 * math.pi * SPEED_OF_LIGHT_CM * f  # rad/s
    return -np.sign(f) * omega**2 * ANGSTROM_M**2 * ATOMIC_MASS_KG / ELEMENTARY_CHARGE


def fcc111_slab(symbol: str = "Pt", a: float = 3.92, size=(2, 2, 3), vacuum: float = 7.0):
    """An fcc(111) slab (pymatgen Structure) from ``ase.build.fcc111``; a geometry placeholder
    for synthetic files (needs ase)."""
    from ase.build import fcc111
    from pymatgen.io.ase import AseAtomsAdaptor

    return AseAtomsAdaptor.get_structure(fcc111(symbol, size=tuple(size), a=a, vacuum=vacuum))


def molecule_in_box(symbols: Sequence[str], step: float, box: float = 12.0):
    """Atoms on a line ``step`` A apart in a cubic box (pymatgen Structure); a geometry placeholder."""
    from pymatgen.core import Lattice, Structure

    coords = [[5.0, 5.0, 5.0 + step * i] for i in range(len(symbols))]
    return Structure(Lattice.cubic(box), list(symbols), coords, coords_are_cartesian=True)


def add_adsorbate(slab, species_atoms: Sequence[str], height: float = 1.9, spacing: float = 1.0):
    """A copy of ``slab`` with the atoms stacked above the origin, ``height`` A over the top layer."""
    s = slab.copy()
    top = max(site.coords[2] for site in s)
    for k, el in enumerate(species_atoms):
        s.append(el, [0.0, 0.0, top + height + spacing * k], coords_are_cartesian=True)
    return s


def write_run(folder, structure, energy: float, **kwargs) -> Path:
    """``folder/vasprun.xml`` for ``structure`` relaxing in two ionic steps to ``energy`` (eV)."""
    return write_vasprun(Path(folder) / "vasprun.xml", [str(site.specie) for site in structure],
                         structure.lattice.matrix, structure.frac_coords, [energy + 0.3, energy], **kwargs)


def write_vib_run(folder, structure, energy: float, freqs_cm: Sequence[float], n_free: int, **kwargs) -> Path:
    """A finite-difference run (IBRION=5) in ``folder``: only the last ``n_free`` atoms free, the
    ``<dynmat>`` eigenvalues giving ``freqs_cm`` (cm^-1)."""
    free = [[False] * 3] * (len(structure) - n_free) + [[True] * 3] * n_free
    return write_run(folder, structure, energy, ibrion=5, nsw=1, selective=free,
                     dynmat=dynmat_block(list(cm_to_eigenvalue(freqs_cm)), n_free), **kwargs)
