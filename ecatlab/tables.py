r"""Limiting-potential tables for papers and reports: formatting, ranking and export.

Input is the frame of :func:`ecatlab.che.limiting_potentials` (one row per surface and pathway);
nothing here recomputes physics. :func:`limiting_potential_table` selects and renames its columns
into a display table whose headers carry their units; :data:`TABLE_COLUMNS` documents each
column. :func:`rank_surfaces` orders surfaces per pathway by the kernel's ranking rule
(:func:`ecatlab.che.kernel.ranking_order`): surfaces whose pathway is blocked by an uphill chemical
step come after every unblocked one, and within each group lower ``G_max`` (the largest step free
energy at the equilibrium potential, chemical steps included; Exner, ACS Catal. 2020) comes first.

Exports (all carry the conditions: potential scale, pH, temperature and reference scheme):

=========== ============================================================================
format      what is written
=========== ============================================================================
CSV         6 decimals, counts as integers; the conditions as columns (``scale``, ``pH``, ``T [K]``)
Markdown    pipe table, numbers right-aligned, units in headers, caption paragraph above
LaTeX       ``table`` with ``booktabs`` rules, caption above; ``longtable`` beyond 40 rows
HTML        ``<table>`` with ``<caption>`` on top, chemical formulas with ``<sub>``/``<sup>``
=========== ============================================================================

Text tables (Markdown, LaTeX, HTML) give potentials and energies with 3 decimals (1 mV, 1 meV),
pH and temperature with 2, counts (electrons, steps, ranks) as integers; the typical uncertainty
of DFT adsorption energies is about 0.1–0.2 eV (common practice, no source), so the last digit
serves traceability, not precision. CSV keeps 6 decimals (:data:`CSV_DECIMALS`, shortest form),
counts as integers and conditions with their shortest digits (``0``, ``298.15``). Headers of the
text tables carry units; captions come first (above the table) and start with the ILLUSTRATIVE
label when the energies are the invented demo numbers (:func:`is_illustrative`). A missing number
is ``—`` (explained in the caption). Chemical text is formatted by :mod:`ecatlab.chemtext`.
"""

from __future__ import annotations

import html
import os
import pathlib
import re
from dataclasses import dataclass
from typing import Iterable, Sequence

import numpy as np
import pandas as pd

from ecatlab.errors import TableInputError

__all__ = [
    "TABLE_COLUMNS",
    "limiting_potential_table",
    "rank_surfaces",
    "sort_by_ranking",
    "blocked_reason",
    "overpotential_matrix",
    "table_caption",
    "to_markdown",
    "to_latex",
    "to_html",
    "export_table",
    "render_table",
    "table_format",
    "TABLE_FORMATS",
    "TableInputError",
    "is_illustrative",
    "ILLUSTRATIVE_NOTE",
    "CSV_DECIMALS",
    "LONGTABLE_ROWS",
]

# source column -> (display header template, LaTeX header, documentation with unit, decimals or None)
_SPEC: dict[str, tuple[str, str, str, int | None]] = {
    "surface": ("surface", "surface", "surface name", None),
    "pathway": ("pathway", "pathway", "pathway key (see ecatlab.list_pathways())", None),
    "limiting_potential": ("U_L [V vs {scale}]", r"$U_\mathrm{{L}}$ / V vs {scale}",
                           "limiting potential: least extreme potential at which every electrochemical step is downhill [V vs {scale}]", 3),
    "equilibrium_potential": ("U_eq [V vs {scale}]", r"$U_\mathrm{{eq}}$ / V vs {scale}",
                              "equilibrium potential of the overall reaction at the stated pH and T [V vs {scale}]", 3),
    "overpotential": ("eta [V]", r"$\eta$ / V", "theoretical overpotential, positive = loss [V]", 3),
    "determining_step": ("potential-determining step", "potential-determining step",
                         "potential-determining step (equation)", None),
    "G_max": ("G_max [eV]", r"$G_\mathrm{{max}}$ / eV",
              "largest step free energy at U_eq over all steps, chemical steps included (Exner 2020); ranking key, lower is better [eV]", 3),
    "blocked": ("blocked", "blocked", "True if an uphill chemical step blocks the pathway at every potential", None),
    "max_chemical_dG": ("max chemical dG [eV]", r"max.\ chemical $\Delta G$ / eV",
                        "largest free energy of a potential-independent (chemical) step; empty if none [eV]", 3),
    "missing_species": ("missing species", "missing species", "adsorbates lacking for this surface (then no numbers)", None),
}

#: Documentation (with units) of the display columns, for the default RHE scale.
TABLE_COLUMNS: dict[str, str] = {
    _SPEC[k][0].format(scale="RHE"): _SPEC[k][2].format(scale="RHE") for k in _SPEC
}

_DEFAULT_COLUMNS = ("surface", "pathway", "limiting_potential", "equilibrium_potential", "overpotential", "determining_step", "G_max")


def _check_frame(lp: pd.DataFrame) -> None:
    need = {"surface", "pathway", "limiting_potential", "overpotential", "scale", "pH", "temperature"}
    if not isinstance(lp, pd.DataFrame) or not need <= set(lp.columns):
        missing = sorted(need - set(getattr(lp, "columns", [])))
        raise TableInputError(
            f"expected the frame returned by ecatlab.limiting_potentials(); columns {missing} are missing"
        )


def _conditions(lp: pd.DataFrame) -> dict:
    attrs = dict(lp.attrs)
    scale = attrs.get("scale") or str(lp["scale"].iloc[0])
    return {
        "scale": scale,
        "pH": float(attrs.get("pH", lp["pH"].iloc[0])),
        "temperature": float(attrs.get("temperature", lp["temperature"].iloc[0])),
        "references": attrs.get("references", ""),
        "source": attrs.get("energy_source", ""),
    }


def table_caption(lp: pd.DataFrame, what: str = "Limiting potentials and theoretical overpotentials") -> str:
    """Caption naming the conditions: scale, pH, T, reference scheme and energy source.

    Parameters
    ----------
    lp : DataFrame
        Output of :func:`ecatlab.che.limiting_potentials` (or a table made from it).
    what : str
        First words of the caption.
    """
    c = _conditions(lp)
    text = (
        f"{what} from the computational hydrogen electrode (CHE) model at pH {c['pH']:g} and "
        f"{c['temperature']:.2f} K; potentials in V vs {c['scale']}, overpotentials in V."
    )
    if c["references"]:
        text += f" Reference scheme: {c['references']}."
    if c["source"]:
        text += f" Energies: {c['source']}."
    text += " Theoretical estimates (thermodynamics only, no kinetics)."
    if is_illustrative(lp) and "ILLUSTRATIVE" not in text:
        text = ILLUSTRATIVE_NOTE + " " + text
    return text


def limiting_potential_table(lp: pd.DataFrame, columns: Sequence[str] | None = None, sort: bool = False) -> pd.DataFrame:
    """Display table of limiting potentials with unit-bearing headers.

    Parameters
    ----------
    lp : DataFrame
        Output of :func:`ecatlab.che.limiting_potentials`.
    columns : sequence of str, optional
        Source columns to keep, from ``surface, pathway, limiting_potential, equilibrium_potential,
        overpotential, determining_step, max_chemical_dG, missing_species``. Default: the first six;
        ``max_chemical_dG`` and ``missing_species`` are added when any row has a value there.
    sort : bool
        Sort by pathway, then by the ranking rule of :func:`sort_by_ranking` (unblocked first,
        lower G_max first, missing last).

    Returns
    -------
    DataFrame
        Full-precision values; headers such as ``"U_L [V vs RHE]"``. ``.attrs["columns"]`` documents
        every column with its unit, ``.attrs["caption"]`` names the conditions, ``.attrs["decimals"]``
        gives the rounding used by the text exports.
    """
    _check_frame(lp)
    c = _conditions(lp)
    if columns is None:
        cols = list(_DEFAULT_COLUMNS)
        if "G_max" not in lp:
            cols.remove("G_max")
        if "max_chemical_dG" in lp and np.isfinite(lp["max_chemical_dG"].to_numpy(dtype=float)).any():
            cols.append("max_chemical_dG")
            if "blocked" in lp:
                cols.append("blocked")
        if "missing_species" in lp and (lp["missing_species"].astype(str).str.len() > 0).any():
            cols.append("missing_species")
    else:
        unknown = [k for k in columns if k not in _SPEC]
        if unknown:
            raise TableInputError(f"unknown column(s) {unknown}; choose from {list(_SPEC)}")
        cols = list(columns)
    frame = sort_by_ranking(lp) if sort else lp
    out = pd.DataFrame({_SPEC[k][0].format(scale=c["scale"]): frame[k].to_numpy() for k in cols})
    out.attrs["columns"] = {_SPEC[k][0].format(scale=c["scale"]): _SPEC[k][2].format(scale=c["scale"]) for k in cols}
    out.attrs["latex_headers"] = {_SPEC[k][0].format(scale=c["scale"]): _SPEC[k][1].format(scale=c["scale"]) for k in cols}
    out.attrs["decimals"] = {_SPEC[k][0].format(scale=c["scale"]): _SPEC[k][3] for k in cols}
    out.attrs["caption"] = table_caption(lp)
    out.attrs["conditions"] = c
    out.attrs["illustrative"] = is_illustrative(lp)
    return out


def _ranking_inputs(frame: pd.DataFrame, blocking_tolerance: float | None = None) -> tuple[np.ndarray, np.ndarray]:
    """(G_max, blocked) of a limiting-potential frame; older frames without them fall back to eta."""
    from ecatlab.che import kernel

    if "G_max" in frame:
        g = frame["G_max"].to_numpy(dtype=float)
        if blocking_tolerance is not None and "max_chemical_dG" in frame:
            blocked = kernel.is_blocked(frame["max_chemical_dG"].to_numpy(dtype=float), blocking_tolerance)
        else:
            blocked = frame["blocked"].to_numpy(dtype=bool) if "blocked" in frame else np.zeros(len(frame), bool)
    else:  # a frame made before G_max existed
        g = frame["overpotential"].to_numpy(dtype=float)
        blocked = np.zeros(len(frame), bool)
    return g, blocked


def sort_by_ranking(lp: pd.DataFrame, blocking_tolerance: float | None = None) -> pd.DataFrame:
    """Rows of a limiting-potential frame, pathways in their order of appearance, each pathway's
    surfaces best first by :func:`ecatlab.che.kernel.ranking_order` (unblocked before blocked, then
    lower G_max; missing data last)."""
    from ecatlab.che import kernel

    _check_frame(lp)
    codes, _ = pd.factorize(lp["pathway"])
    g, blocked = _ranking_inputs(lp, blocking_tolerance)
    within = kernel.ranking_order(g, blocked)
    rank_in = np.empty(len(lp), dtype=np.int64)
    rank_in[within] = np.arange(len(lp))
    order = np.lexsort((rank_in, codes))
    out = lp.iloc[order].reset_index(drop=True)
    out.attrs = dict(lp.attrs)
    return out


def blocked_reason(lp: pd.DataFrame) -> pd.Series:
    """Per row: '' or why the pathway is blocked ('blocked at every potential by <step> (+x eV)')."""
    if "blocked" not in lp or "uphill_chemical_steps" not in lp:
        return pd.Series([""] * len(lp), index=lp.index, dtype=object)
    blocked = lp["blocked"].to_numpy(dtype=bool)
    text = lp["uphill_chemical_steps"].astype(str).to_numpy()
    out = np.where(blocked, "blocked at every potential by " + text.astype(object), "")
    return pd.Series(out, index=lp.index, dtype=object)


def rank_surfaces(
    lp: pd.DataFrame, pathways: str | Iterable[str] | None = None, blocking_tolerance: float | None = None
) -> pd.DataFrame:
    """Surfaces ranked per pathway, rank 1 = best.

    The rule is the kernel's (:func:`ecatlab.che.kernel.ranking_order`): a surface whose pathway is
    blocked by an uphill chemical step (``blocked``; potential-independent, so no potential can
    drive it) ranks after every unblocked surface; within each group lower ``G_max`` ranks first.
    ``G_max`` is the largest step free energy at the equilibrium potential over all steps, chemical
    ones included (Exner, ACS Catal. 10, 12607 (2020)); for one-electron steps without an uphill
    chemical step it is e times the theoretical overpotential. Surfaces without numbers (missing
    species) come last with rank ``<NA>``; ties (same blocked flag and G_max) share the lower rank.

    ``blocking_tolerance`` (eV, default: the table's ``blocked`` column, i.e. any uphill chemical
    step) lets a chemical step uphill by at most that much count as not blocking, e.g. 0.1 eV for
    steps that are thermally surmountable at room temperature (a judgement call; say so in papers).

    Returns
    -------
    DataFrame
        Columns ``pathway``, ``rank``, ``surface``, ``G_max`` [eV], ``blocked``, ``overpotential`` [V],
        ``limiting_potential`` [V vs scale], ``determining_step``, ``why`` (the blocking chemical
        step, or empty); ``.attrs`` carries the caption and column docs.
    """
    _check_frame(lp)
    frame = lp
    if pathways is not None:
        keep = [pathways] if isinstance(pathways, str) else list(pathways)
        frame = frame[frame["pathway"].isin(keep)]
        frame.attrs = dict(lp.attrs)
    frame = sort_by_ranking(frame, blocking_tolerance)
    g, blocked = _ranking_inputs(frame, blocking_tolerance)
    codes, _ = pd.factorize(frame["pathway"])
    key_change = np.ones(len(frame), dtype=bool)
    key_change[1:] = (codes[1:] != codes[:-1]) | (blocked[1:] != blocked[:-1]) | ~(np.isclose(g[1:], g[:-1], rtol=0, atol=1e-12))
    position = np.zeros(len(frame), dtype=np.int64)
    starts = np.r_[0, np.flatnonzero(codes[1:] != codes[:-1]) + 1]
    position = np.arange(len(frame)) - np.repeat(starts, np.diff(np.r_[starts, len(frame)]))
    first_of_tie = np.maximum.accumulate(np.where(key_change, np.arange(len(frame)), 0))
    rank = (position - (np.arange(len(frame)) - first_of_tie) + 1).astype(float)
    rank[np.isnan(g)] = np.nan
    cols = ["pathway", "surface"] + [c for c in ("G_max", "blocked") if c in frame] + ["overpotential", "limiting_potential", "determining_step"]
    out = frame[cols].copy()
    out.insert(1, "rank", pd.array(np.where(np.isnan(rank), pd.NA, rank), dtype="Int64"))
    if "blocked" in out:
        out["blocked"] = blocked
    out["why"] = np.where(blocked, blocked_reason(frame.assign(blocked=True)).to_numpy(), "")
    c = _conditions(lp)
    out.attrs["caption"] = table_caption(
        lp, "Surfaces ranked per pathway (rank 1 = best): unblocked before blocked by an uphill chemical step, then lowest G_max"
    )
    out.attrs["columns"] = {
        "pathway": "pathway key",
        "rank": "rank within the pathway, 1 = best: unblocked surfaces first, then lower G_max [-]",
        "surface": "surface name",
        "G_max": "largest step free energy at U_eq over all steps, chemical steps included (Exner 2020) [eV]",
        "blocked": "True if an uphill chemical step blocks the pathway at every potential",
        "overpotential": "theoretical overpotential from the electrochemical steps [V]",
        "limiting_potential": f"limiting potential [V vs {c['scale']}]",
        "determining_step": "potential-determining step (equation)",
        "why": "the uphill chemical step(s) that block the pathway; empty if not blocked",
    }
    out.attrs["decimals"] = {"G_max": 3, "overpotential": 3, "limiting_potential": 3}
    out.attrs["conditions"] = c
    out.attrs["illustrative"] = is_illustrative(lp)
    return out


def overpotential_matrix(lp: pd.DataFrame) -> pd.DataFrame:
    """Wide table of theoretical overpotentials [V]: rows surfaces, columns pathways (NaN: missing)."""
    _check_frame(lp)
    wide = lp.pivot(index="surface", columns="pathway", values="overpotential")
    wide = wide.reindex(index=list(pd.unique(lp["surface"])), columns=list(pd.unique(lp["pathway"])))
    wide.columns.name = None
    wide.attrs["caption"] = table_caption(lp, "Theoretical overpotentials in V (rows: surfaces, columns: pathways)")
    wide.attrs["conditions"] = _conditions(lp)
    wide.attrs["decimals"] = {c: 3 for c in wide.columns}
    wide.attrs["illustrative"] = is_illustrative(lp)
    return wide


# ------------------------------------------------------------------------------------------------
# text rendering: the one table writer
# ------------------------------------------------------------------------------------------------
#: The word that marks invented demo numbers wherever they travel.
ILLUSTRATIVE_NOTE = "ILLUSTRATIVE data (invented numbers, not results; do not cite)."

#: Shown in text tables for a number that does not exist (NaN/None); the caption then explains it.
MISSING_MARK = "\N{EM DASH}"
MISSING_NOTE = f"{MISSING_MARK} = no value (not applicable, e.g. no chemical step, or not computed)."

#: LaTeX tables with more body rows than this are written as ``longtable`` (page breaks, header repeated).
LONGTABLE_ROWS = 40

#: Decimals of potentials (V) and energies (eV) in CSV files unless ``decimals`` is given: 1e-6 V or
#: eV is far below any DFT precision and keeps every number traceable; floats print in their
#: shortest form (0.69, not 0.690000).
CSV_DECIMALS = 6

# decimals by kind of number (text formats): potentials and energies 3 (1 meV / 1 mV), pH and T 2
_DEFAULT_DECIMALS = {"energy": 3, "potential": 3, "pH": 2, "temperature": 2, "other": 3}
_UNIT_RE = re.compile(r"\[([^\[\]]+)\]")
_CHEM_WORDS = ("step", "reaction", "species", "route", "state", "product", "reactant", "stuck", "equation",
               "adsorbate", "why", "descriptor", "intermediate")


def is_illustrative(obj) -> bool:
    """True when an energy table, a result frame or a text carries the ILLUSTRATIVE label.

    Looks at (in this order) ``attrs["illustrative"]`` of a DataFrame, the word "illustrative"
    (any case) in its ``attrs`` energy source / caption, a ``source`` column of an energy table's
    rows (the ingested example tree and the demo CSV label every row), and the table's ``source``.
    """
    if isinstance(obj, str):
        return "illustrative" in obj.lower()
    attrs = getattr(obj, "attrs", None)
    if isinstance(attrs, dict):
        if attrs.get("illustrative"):
            return True
        cond = attrs.get("conditions") if isinstance(attrs.get("conditions"), dict) else {}
        texts = [attrs.get("energy_source", ""), cond.get("source", ""), cond.get("energy_source", "")]
        if any("illustrative" in str(t).lower() for t in texts):
            return True
    if hasattr(obj, "scheme") and hasattr(obj, "frame"):  # an EnergyTable
        if "illustrative" in str(getattr(obj, "source", "")).lower():
            return True
        if any("illustrative" in str(n).lower() for n in getattr(obj, "notes", ())):
            return True
        frame = obj.frame
        for col in ("source", "provenance", "note"):
            if col in frame.columns:
                values = pd.unique(frame[col])  # distinct values first: cheap on large screens
                if any("illustrative" in str(v).lower() for v in values):
                    return True
    return False


def _unit_of(doc: str | None) -> str | None:
    """The unit in the last ``[...]`` of a column doc (``"... [V vs scale]"`` -> ``"V vs scale"``)."""
    if not doc:
        return None
    found = _UNIT_RE.findall(str(doc))
    return found[-1].strip() if found else None


def _kind_of(name: str, unit: str | None) -> str:
    low = str(name).lower().strip()
    if low in ("ph", "ph [-]"):
        return "pH"
    if unit == "K" or low in ("temperature", "t [k]", "t", "temperature [k]"):
        return "temperature"
    if unit is not None and (unit == "V" or unit.startswith("V vs") or unit.startswith("V ")):
        return "potential"
    if unit is not None and unit in ("eV", "eV/site", "eV per site"):
        return "energy"
    if "[v" in low:
        return "potential"
    if "[ev" in low:
        return "energy"
    return "other"


@dataclass(frozen=True)
class _Column:
    name: str
    header: str
    kind: str  # "float", "int", "bool", "text"
    decimals: int | None
    quantity: str  # "potential", "energy", "pH", "temperature", "other"
    chemistry: bool


def _docs_of(table: pd.DataFrame) -> dict:
    docs = table.attrs.get("columns")
    docs = dict(docs) if isinstance(docs, dict) else {}
    try:
        from ecatlab.che.engine import LIMITING_POTENTIAL_COLUMNS
    except ImportError:  # pragma: no cover - the engine is part of the package
        LIMITING_POTENTIAL_COLUMNS = {}
    for k, v in LIMITING_POTENTIAL_COLUMNS.items():
        docs.setdefault(k, v)
    return docs


def _scale_of(table: pd.DataFrame) -> str | None:
    c = table.attrs.get("conditions")
    if isinstance(c, dict) and c.get("scale"):
        return str(c["scale"])
    if table.attrs.get("scale"):
        return str(table.attrs["scale"])
    if "scale" in table.columns and len(table):
        values = pd.unique(table["scale"].astype(str))
        if len(values) == 1:
            return str(values[0])
    return None


def _plan(table: pd.DataFrame, decimals: int | None, units_in_headers: bool = True) -> list[_Column]:
    """How each column is written: header with unit, kind of cell, decimals."""
    docs = _docs_of(table)
    per_col = dict(table.attrs.get("decimals", {}) or {})
    scale = _scale_of(table)
    plan = []
    for col in table.columns:
        s = table[col]
        unit = _unit_of(docs.get(col))
        if unit and scale:
            unit = unit.replace("vs scale", f"vs {scale}")
        quantity = _kind_of(col, unit)
        header = str(col)
        if units_in_headers and unit and unit not in ("-", "") and "[" not in header:
            header = f"{header} [{unit}]"
        if pd.api.types.is_bool_dtype(s):
            kind = "bool"
        elif pd.api.types.is_numeric_dtype(s) and quantity in ("pH", "temperature"):
            kind = "float"  # conditions: 2 decimals in text tables (CSV: shortest digits)
        elif pd.api.types.is_integer_dtype(s):
            kind = "int"
        elif pd.api.types.is_numeric_dtype(s):
            values = s.to_numpy(dtype=float, na_value=np.nan)
            finite = values[np.isfinite(values)]
            integral = finite.size > 0 and bool(np.all(finite == np.round(finite))) and np.all(np.abs(finite) < 2**53)
            # a whole-number column of counts (electrons, steps) is written as integers; a column
            # whose decimals are set explicitly, or holding potentials/energies, stays a float
            kind = "int" if integral and quantity == "other" and per_col.get(col) is None else "float"
        else:
            kind = "text"
        d = None
        if kind == "float":
            if quantity in ("pH", "temperature"):
                d = per_col.get(col) if per_col.get(col) is not None else _DEFAULT_DECIMALS[quantity]
            elif decimals is not None:
                d = decimals
            elif per_col.get(col) is not None:
                d = int(per_col[col])
            else:
                d = _DEFAULT_DECIMALS[quantity]
        chem = kind == "text" and any(w in str(col).lower() for w in _CHEM_WORDS)
        plan.append(_Column(str(col), header, kind, d, quantity, chem))
    return plan


def _missing(v) -> bool:
    return v is None or v is pd.NA or (isinstance(v, (float, np.floating)) and not np.isfinite(v))


def _cell_texts(table: pd.DataFrame, plan: list[_Column], missing: str) -> tuple[list[list[str]], bool]:
    """Rows of cell texts (numbers formatted per column) and whether any number was missing."""
    columns = []
    any_missing = False
    for spec, col in zip(plan, table.columns):
        values = table[col].to_numpy(dtype=object)
        if spec.kind == "float":
            d = spec.decimals
            cells = [missing if _missing(v) else f"{float(v):.{d}f}" for v in values]
        elif spec.kind == "int":
            cells = [missing if _missing(v) else str(int(round(float(v)))) for v in values]
        elif spec.kind == "bool":
            cells = [missing if _missing(v) else str(bool(v)) for v in values]
        else:
            cells = ["" if _missing(v) else str(v) for v in values]
        if spec.kind != "text" and any(c == missing for c in cells):
            any_missing = True
        # "-0.000" reads as a sign that is not there
        if spec.kind == "float":
            zero = "-" + f"{0:.{spec.decimals}f}"
            cells = [c[1:] if c == zero else c for c in cells]
        columns.append(cells)
    rows = [list(r) for r in zip(*columns)] if columns else []
    return rows, any_missing


def _caption_text(table: pd.DataFrame, caption: str | bool, any_missing: bool, missing_note: str = MISSING_NOTE) -> str:
    """Caption with the ILLUSTRATIVE label first (when the data are illustrative) and the missing-value note."""
    cap = table.attrs.get("caption", "") if caption is True else (caption or "")
    if caption is False:
        return ""
    cap = str(cap).strip()
    if is_illustrative(table) and "ILLUSTRATIVE" not in cap:
        cap = (ILLUSTRATIVE_NOTE + " " + cap).strip()
    if any_missing:
        cap = (cap + " " + missing_note).strip()
    return cap


def _chem(text: str, fmt: str) -> str:
    from ecatlab import chemtext

    return chemtext.render(text, fmt)


def _index_frame(table: pd.DataFrame) -> pd.DataFrame:
    if not isinstance(table, pd.DataFrame):
        from ecatlab.errors import clip

        raise TableInputError(f"expected a pandas DataFrame (e.g. from ecatlab.limiting_potential_table()), got "
                              f"{type(table).__name__} {clip(repr(table))}")
    if isinstance(table.index, pd.RangeIndex) and table.index.name is None:
        return table
    name = table.index.name or ""
    out = table.reset_index()
    out = out.rename(columns={out.columns[0]: name or " "})
    out.attrs = dict(table.attrs)
    return out


def to_markdown(table: pd.DataFrame, decimals: int | None = None, caption: str | bool = True, missing: str = MISSING_MARK) -> str:
    """Markdown pipe table with its caption as a paragraph *above* it.

    Headers carry the units of the column docs (``attrs["columns"]``, falling back to
    :data:`ecatlab.che.LIMITING_POTENTIAL_COLUMNS`); numbers are right-aligned with one number of
    decimals per column (potentials and energies 3, pH and T 2, counts as integers; ``decimals``
    overrides the physics columns); a missing number is ``—`` and the caption says so. Chemistry
    stays in the notation's ASCII (copyable back into ecatlab); ``|`` in cells is escaped.
    """
    from ecatlab.safe_io import markdown_cell as esc

    decimals = check_decimals(decimals)
    table = _index_frame(table)
    plan = _plan(table, decimals)
    headers = [c.header for c in plan]
    rows, any_missing = _cell_texts(table, plan, missing)
    numeric = [c.kind in ("float", "int") for c in plan]
    widths = [max([len(esc(h))] + [len(esc(r[j])) for r in rows] + [3]) for j, h in enumerate(headers)]

    def line(cells):
        return "| " + " | ".join(esc(c).rjust(w) if num else esc(c).ljust(w) for c, w, num in zip(cells, widths, numeric)) + " |"

    rule = "| " + " | ".join(("-" * (w - 1) + ":") if num else ("-" * w) for w, num in zip(widths, numeric)) + " |"
    text = "\n".join([line(headers), rule] + [line(r) for r in rows]) + "\n"
    cap = _caption_text(table, caption, any_missing)
    if cap:
        text = f"**Table.** {esc(cap)}\n\n" + text
    return text


def _latex_cell(text: str, spec: _Column) -> str:
    from ecatlab import chemtext

    if spec.kind in ("float", "int"):
        return "---" if text == MISSING_MARK else text.replace("-", "$-$", 1) if text.startswith("-") else text
    return chemtext.latex(text) if spec.chemistry else chemtext.latex_escape(text)


def to_latex(
    table: pd.DataFrame,
    decimals: int | None = None,
    caption: str | bool = True,
    label: str | None = "tab:limiting-potentials",
    missing: str = MISSING_MARK,
    longtable: bool | None = None,
) -> str:
    r"""LaTeX table with ``booktabs`` rules, caption above; long tables as ``longtable``.

    Needs ``\usepackage{booktabs}`` (and ``\usepackage{longtable}`` for a table of more than
    :data:`LONGTABLE_ROWS` rows, or ``longtable=True``): the header repeats on every page and
    the table breaks across pages. Numbers are right-aligned with per-column decimals; a missing
    number is ``---`` (explained in the caption); chemical formulas in text cells are set with
    sub/superscripts (:func:`ecatlab.chemtext.latex`); every other special character is escaped.
    Headers come from ``table.attrs["latex_headers"]`` when present, else the unit-bearing header.
    """
    from ecatlab import chemtext

    table = _index_frame(table)
    decimals = check_decimals(decimals)
    plan = _plan(table, decimals)
    headers = table.attrs.get("latex_headers", {}) or {}
    rows, any_missing = _cell_texts(table, plan, missing)
    spec = "".join("r" if c.kind in ("float", "int") else "l" for c in plan)
    head = " & ".join(headers.get(c.name, chemtext.latex_escape(c.header)) for c in plan) + r" \\"
    body = [" & ".join(_latex_cell(cell, c) for cell, c in zip(r, plan)) + r" \\" for r in rows]
    cap = _caption_text(table, caption, any_missing, MISSING_NOTE.replace(MISSING_MARK, "---", 1))
    cap_tex = chemtext.latex(cap).replace("---", "---") if cap else ""
    long = (len(rows) > LONGTABLE_ROWS) if longtable is None else bool(longtable)
    label_tex = (r"\label{" + chemtext.latex_escape(label) + "}") if label else ""
    if long:
        n = len(plan)
        lines = [r"% needs \usepackage{booktabs} and \usepackage{longtable}", r"\begin{longtable}{" + spec + "}"]
        if cap_tex or label_tex:
            lines.append((r"\caption{" + cap_tex + "}" if cap_tex else "") + label_tex + r" \\")
        lines += [r"\toprule", head, r"\midrule", r"\endfirsthead",
                  r"\multicolumn{" + str(n) + r"}{l}{\small\emph{(continued)}} \\", r"\toprule", head, r"\midrule", r"\endhead",
                  r"\midrule", r"\multicolumn{" + str(n) + r"}{r}{\small\emph{continued on the next page}} \\", r"\endfoot",
                  r"\bottomrule", r"\endlastfoot"]
        lines += body
        lines.append(r"\end{longtable}")
        return "\n".join(lines) + "\n"
    lines = [r"% needs \usepackage{booktabs}", r"\begin{table}", r"  \centering"]
    if cap_tex:
        lines.append(r"  \caption{" + cap_tex + "}")
    if label_tex:
        lines.append("  " + label_tex)
    lines += [r"  \begin{tabular}{" + spec + "}", r"    \toprule", "    " + head, r"    \midrule"]
    lines += ["    " + b for b in body]
    lines += [r"    \bottomrule", r"  \end{tabular}", r"\end{table}"]
    return "\n".join(lines) + "\n"


def to_html(
    table: pd.DataFrame,
    decimals: int | None = None,
    caption: str | bool = True,
    missing: str = MISSING_MARK,
    table_class: str = "ecatlab-table",
    chemistry: bool = True,
) -> str:
    """HTML ``<table>`` with its ``<caption>`` first (shown above); column docs become ``title`` tooltips.

    Well-formed (XML-parseable) markup; every user-given text is escaped; chemical formulas in
    text cells get ``<sub>``/``<sup>`` (:func:`ecatlab.chemtext.html`) when ``chemistry`` is true.
    Numbers carry ``class="num"`` (right-aligned in the report's style) with per-column decimals.
    """
    from ecatlab import chemtext

    table = _index_frame(table)
    decimals = check_decimals(decimals)
    docs = _docs_of(table)
    plan = _plan(table, decimals)
    rows, any_missing = _cell_texts(table, plan, missing)
    cap = _caption_text(table, caption, any_missing)
    parts = [f'<table class="{html.escape(table_class)}">']
    if cap:
        parts.append(f'<caption style="caption-side:top">{chemtext.html(cap) if chemistry else html.escape(cap)}</caption>')
    ths = "".join(
        f'<th scope="col" title="{html.escape(str(docs.get(c.name, "")))}">{html.escape(c.header)}</th>' for c in plan
    )
    parts.append(f"<thead><tr>{ths}</tr></thead><tbody>")
    for r in rows:
        tds = "".join(
            f'<td class="num">{html.escape(cell)}</td>' if c.kind in ("float", "int")
            else f"<td>{chemtext.html(cell) if (chemistry and c.chemistry) else html.escape(cell)}</td>"
            for cell, c in zip(r, plan)
        )
        parts.append(f"<tr>{tds}</tr>")
    parts.append("</tbody></table>")
    return "\n".join(parts) + "\n"


def _csv_frame(table: pd.DataFrame, decimals: int | None, conditions_columns: bool) -> pd.DataFrame:
    """The frame as written to CSV: counts as integers, conditions with their shortest digits,
    potentials/energies rounded to ``decimals`` (default :data:`CSV_DECIMALS`)."""
    frame = _index_frame(table)
    c = table.attrs.get("conditions")
    if c and conditions_columns:
        extra = {"scale": c.get("scale"), "pH": c.get("pH"), "T [K]": c.get("temperature")}
        frame = frame.assign(**{k: v for k, v in extra.items() if k not in frame.columns and v is not None})
    plan = _plan(frame, decimals, units_in_headers=False)
    out = {}
    for spec, col in zip(plan, frame.columns):
        s = frame[col]
        if spec.kind == "int" and not pd.api.types.is_integer_dtype(s):
            out[col] = pd.array(np.where(np.isfinite(s.to_numpy(dtype=float, na_value=np.nan)),
                                         s.to_numpy(dtype=float, na_value=np.nan), np.nan), dtype="Float64").round().astype("Int64")
        elif spec.kind == "float":
            values = s.to_numpy(dtype=float, na_value=np.nan)
            if spec.quantity in ("pH", "temperature"):  # conditions with their shortest digits: 0, 7, 298.15
                finite = values[np.isfinite(values)]
                whole = finite.size > 0 and bool(np.all(finite == np.round(finite)))
                out[col] = pd.array(np.round(values), dtype="Float64").astype("Int64") if whole and finite.size == values.size else values
            else:
                out[col] = np.round(values, decimals if decimals is not None else CSV_DECIMALS)
        else:
            out[col] = s.to_numpy()
    result = pd.DataFrame(out, columns=list(frame.columns))
    result.attrs = dict(table.attrs)
    return result


#: Formats of :func:`render_table` / :func:`export_table` and the file extensions that pick them.
TABLE_FORMATS = ("csv", "markdown", "latex", "html", "json")
FORMAT_SUFFIXES = {"csv": "csv", "tsv": "csv", "md": "markdown", "markdown": "markdown", "tex": "latex",
                   "latex": "latex", "html": "html", "htm": "html", "json": "json"}

#: Allowed range of ``decimals`` in the text exports.
DECIMALS_RANGE = (0, 12)


def check_decimals(decimals: int | None, option: str = "decimals") -> int | None:
    """``decimals`` as an int within :data:`DECIMALS_RANGE` (``None`` passes); an OptionError otherwise."""
    from ecatlab.errors import OptionError

    if decimals is None:
        return None
    if isinstance(decimals, bool) or not isinstance(decimals, (int, np.integer)) or not DECIMALS_RANGE[0] <= int(decimals) <= DECIMALS_RANGE[1]:
        raise OptionError(f"{option} {decimals!r}: give a whole number of decimals from {DECIMALS_RANGE[0]} to {DECIMALS_RANGE[1]}")
    return int(decimals)


def table_format(path: str | os.PathLike | None = None, fmt: str | None = None, option: str = "--format") -> str:
    """The table format from an explicit ``fmt`` and/or a file suffix; an error when they disagree or are unknown."""
    from ecatlab.errors import OptionError, OutputPathError, clip

    by_suffix = None
    if path is not None:
        suffix = pathlib.Path(path).suffix.lower().lstrip(".")
        by_suffix = FORMAT_SUFFIXES.get(suffix)
        if by_suffix is None and fmt is None:
            raise OutputPathError(
                f"unknown table format {suffix!r} for {clip(str(path))!r}; use a .csv, .tsv, .md, .tex, .html or .json file "
                "(or name the format)"
            )
    if fmt is not None:
        kind = FORMAT_SUFFIXES.get(str(fmt).lower())
        if kind is None:
            raise OptionError(f"{option} {clip(fmt)!r}: unknown table format; use one of {', '.join(TABLE_FORMATS)}")
        if path is not None and by_suffix is not None and by_suffix != kind:
            raise OptionError(
                f"{option} {fmt} does not match the extension of {clip(str(path))!r} ({by_suffix}); "
                "make them agree or drop one of them"
            )
        if path is not None and by_suffix is None:
            raise OutputPathError(
                f"{clip(str(path))!r}: the extension does not match the {kind} format; name the file "
                f"with one of {', '.join('.' + s for s, k in FORMAT_SUFFIXES.items() if k == kind and s != kind)}"
            )
        return kind
    return by_suffix


def _json_text(table: pd.DataFrame) -> str:
    import json

    frame = _index_frame(table)
    payload = {
        "caption": _caption_text(table, True, any_missing=False),
        "illustrative": is_illustrative(table),
        "conditions": table.attrs.get("conditions", {}),
        "columns": table.attrs.get("columns", {}),
        "rows": json.loads(frame.to_json(orient="records")),
    }
    return json.dumps(payload, indent=2, default=str) + "\n"


def render_table(table: pd.DataFrame, fmt: str, decimals: int | None = None, caption: bool | str = True,
                 csv_comment: bool = False, sep: str = ",") -> str:
    """The one table writer: a table as CSV, Markdown, LaTeX, HTML or JSON text.

    Parameters
    ----------
    table : DataFrame
        Any table of this module (``attrs`` caption, column docs and decimals are used).
    fmt : str
        ``"csv"``, ``"markdown"``, ``"latex"``, ``"html"`` or ``"json"`` (or an extension).
    decimals : int, optional
        Decimals of the potentials and energies (0 to 12). ``None``: the per-column defaults
        (text formats: potentials and energies 3, pH and T 2; CSV: :data:`CSV_DECIMALS`).
        Counts (electrons, steps, ranks) are always integers; JSON keeps full precision.
    caption : bool or str
        Include the caption (``True``: ``attrs["caption"]``; a string replaces it). It comes
        first: above the table in Markdown, LaTeX and HTML; as a ``# `` comment line above the
        CSV header with ``csv_comment`` (and always when the data are ILLUSTRATIVE).
    csv_comment : bool
        Put the caption as a ``#`` comment line above the CSV header instead of appending the
        conditions (``scale``, ``pH``, ``T [K]``) as columns.

    Notes
    -----
    Headers of the text formats carry the units of the column docs (``attrs["columns"]``, else
    :data:`ecatlab.che.LIMITING_POTENTIAL_COLUMNS`), e.g. ``limiting_potential [V vs RHE]``; CSV
    headers stay the plain column names (machine-readable; the units are in the column docs).
    A missing number is ``—`` in the text formats (the caption explains it) and an empty cell in
    CSV. Illustrative data (:func:`is_illustrative`) get :data:`ILLUSTRATIVE_NOTE` at the start
    of the caption. CSV cells are neutralised against spreadsheet formula injection (OWASP "CSV
    Injection", see :mod:`ecatlab.safe_io`); Markdown cells escape ``|``; HTML is escaped; LaTeX
    specials are escaped; LaTeX tables longer than :data:`LONGTABLE_ROWS` rows are ``longtable``.
    """
    from ecatlab import safe_io
    from ecatlab.errors import OptionError, clip

    kind = FORMAT_SUFFIXES.get(str(fmt).lower())
    if kind is None:
        raise OptionError(f"unknown table format {clip(fmt)!r}; use one of {', '.join(TABLE_FORMATS)}")
    decimals = check_decimals(decimals)
    if kind == "csv":
        frame = _csv_frame(table, decimals, conditions_columns=not csv_comment)
        text = safe_io.csv_text(frame, index=False, sep=sep, lineterminator="\n")
        cap = "" if caption is False else _caption_text(table, caption, any_missing=False)
        if cap and (csv_comment or is_illustrative(table)):
            note = " Empty cells: no value." if frame.isna().to_numpy().any() else ""
            text = safe_io.comment_lines([cap + note]) + text
        return text
    if kind == "markdown":
        return to_markdown(table, decimals, caption)
    if kind == "latex":
        return to_latex(table, decimals, caption)
    if kind == "html":
        return to_html(table, decimals, caption)
    return _json_text(table)


def export_table(table: pd.DataFrame, path: str | os.PathLike, fmt: str | None = None, decimals: int | None = None,
                 force: bool = False, inputs: Iterable[str | os.PathLike] = ()) -> pathlib.Path:
    """Write a table as CSV (``.csv``/``.tsv``), Markdown (``.md``), LaTeX (``.tex``), HTML (``.html``) or JSON.

    The format comes from ``fmt`` (``"csv"``, ``"markdown"``, ``"latex"``, ``"html"``, ``"json"``)
    or the suffix. CSV keeps :data:`CSV_DECIMALS` decimals and appends the conditions as columns when absent.
    The file is written atomically (temporary file in the target folder, then ``os.replace``);
    an existing file is replaced only with ``force=True``, and never when it is one of ``inputs``.

    Raises
    ------
    OutputPathError
        Unknown extension, a folder, one of the inputs (checked before anything is rendered).
    OutputExistsError
        The file exists and ``force`` is false.
    """
    from ecatlab import safe_io

    target = pathlib.Path(path)
    kind = table_format(target, fmt)
    safe_io.check_output(target, force=force, inputs=inputs, what="table")
    sep = "\t" if target.suffix.lower() == ".tsv" else ","
    text = render_table(table, kind, decimals, sep=sep)
    safe_io.atomic_write_text(target, text, force=force, inputs=inputs, what="table")
    return target
