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
CSV         full-precision numbers; the conditions as columns (``scale``, ``pH``, ``T [K]``)
Markdown    pipe table, numbers rounded, caption as a paragraph under the table
LaTeX       ``table`` float with ``booktabs`` rules (``\usepackage{booktabs}``), caption
HTML        ``<table>`` with ``<caption>``, chemical formulas with ``<sub>``/``<sup>``
=========== ============================================================================

Potentials are rounded to 2 decimals by default (0.01 V), well below the typical uncertainty of
DFT adsorption energies (about 0.1–0.2 eV; common practice, no source), so more digits would claim
a precision the numbers do not have. The CSV keeps full precision for further work.
"""

from __future__ import annotations

import html
import os
import pathlib
import re
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
]

# source column -> (display header template, LaTeX header, documentation with unit, decimals or None)
_SPEC: dict[str, tuple[str, str, str, int | None]] = {
    "surface": ("surface", "surface", "surface name", None),
    "pathway": ("pathway", "pathway", "pathway key (see ecatlab.list_pathways())", None),
    "limiting_potential": ("U_L [V vs {scale}]", r"$U_\mathrm{{L}}$ / V vs {scale}",
                           "limiting potential: least extreme potential at which every electrochemical step is downhill [V vs {scale}]", 2),
    "equilibrium_potential": ("U_eq [V vs {scale}]", r"$U_\mathrm{{eq}}$ / V vs {scale}",
                              "equilibrium potential of the overall reaction at the stated pH and T [V vs {scale}]", 2),
    "overpotential": ("eta [V]", r"$\eta$ / V", "theoretical overpotential, positive = loss [V]", 2),
    "determining_step": ("potential-determining step", "potential-determining step",
                         "potential-determining step (equation)", None),
    "G_max": ("G_max [eV]", r"$G_\mathrm{{max}}$ / eV",
              "largest step free energy at U_eq over all steps, chemical steps included (Exner 2020); ranking key, lower is better [eV]", 2),
    "blocked": ("blocked", "blocked", "True if an uphill chemical step blocks the pathway at every potential", None),
    "max_chemical_dG": ("max chemical dG [eV]", r"max.\ chemical $\Delta G$ / eV",
                        "largest free energy of a potential-independent (chemical) step; empty if none [eV]", 2),
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
    out.attrs["decimals"] = {"G_max": 2, "overpotential": 2, "limiting_potential": 2}
    out.attrs["conditions"] = c
    return out


def overpotential_matrix(lp: pd.DataFrame) -> pd.DataFrame:
    """Wide table of theoretical overpotentials [V]: rows surfaces, columns pathways (NaN: missing)."""
    _check_frame(lp)
    wide = lp.pivot(index="surface", columns="pathway", values="overpotential")
    wide = wide.reindex(index=list(pd.unique(lp["surface"])), columns=list(pd.unique(lp["pathway"])))
    wide.columns.name = None
    wide.attrs["caption"] = table_caption(lp, "Theoretical overpotentials in V (rows: surfaces, columns: pathways)")
    wide.attrs["conditions"] = _conditions(lp)
    wide.attrs["decimals"] = {c: 2 for c in wide.columns}
    return wide


# ------------------------------------------------------------------------------------------------
# text rendering
# ------------------------------------------------------------------------------------------------
def _cells(table: pd.DataFrame, decimals: int | None, missing: str) -> list[list[str]]:
    per_col = dict(table.attrs.get("decimals", {}))
    out = []
    for col in table.columns:
        values = table[col].to_numpy()
        d = decimals if decimals is not None else per_col.get(col)
        numeric = pd.api.types.is_numeric_dtype(table[col]) and not pd.api.types.is_bool_dtype(table[col])
        cells = []
        for v in values:
            if v is None or (isinstance(v, float) and not np.isfinite(v)) or v is pd.NA:
                cells.append(missing)
            elif numeric and isinstance(v, (float, np.floating)):
                cells.append(f"{v:.{d if d is not None else 3}f}")
            else:
                cells.append(str(v))
        out.append(cells)
    return [list(row) for row in zip(*out)] if out else []


def _chemistry_columns(table: pd.DataFrame) -> list[bool]:
    """Text columns holding chemical equations or species (formatted with sub/superscripts)."""
    return [any(w in str(c).lower() for w in ("step", "reaction", "species")) for c in table.columns]


def _numeric_columns(table: pd.DataFrame) -> list[bool]:
    return [pd.api.types.is_numeric_dtype(table[c]) and not pd.api.types.is_bool_dtype(table[c]) for c in table.columns]


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


def to_markdown(table: pd.DataFrame, decimals: int | None = None, caption: str | bool = True, missing: str = "n/a") -> str:
    """Markdown pipe table (numbers right-aligned) followed by the caption as a paragraph.

    ``decimals`` overrides the per-column rounding kept in ``table.attrs``; ``caption=True`` uses
    ``table.attrs["caption"]``, a string replaces it, ``False`` leaves it out.
    """
    from ecatlab.safe_io import markdown_cell as esc

    decimals = check_decimals(decimals)
    table = _index_frame(table)
    headers = [str(c) for c in table.columns]
    rows = _cells(table, decimals, missing)
    numeric = _numeric_columns(table)

    widths = [max([len(esc(h))] + [len(esc(r[j])) for r in rows] + [3]) for j, h in enumerate(headers)]
    def line(cells):
        return "| " + " | ".join(esc(c).rjust(w) if num else esc(c).ljust(w) for c, w, num in zip(cells, widths, numeric)) + " |"
    rule = "| " + " | ".join(("-" * (w - 1) + ":") if num else ("-" * w) for w, num in zip(widths, numeric)) + " |"
    text = "\n".join([line(headers), rule] + [line(r) for r in rows])
    cap = table.attrs.get("caption", "") if caption is True else (caption or "")
    if cap:
        text += "\n\n" + f"*{esc(cap)}*"
    return text + "\n"


_LATEX_SPECIAL = {"\\": r"\textbackslash{}", "&": r"\&", "%": r"\%", "$": r"\$", "#": r"\#", "_": r"\_", "{": r"\{",
                  "}": r"\}", "~": r"\textasciitilde{}", "^": r"\textasciicircum{}"}


def _latex_escape(text: str) -> str:
    return "".join(_LATEX_SPECIAL.get(ch, ch) for ch in text)


def _latex_chem(text: str) -> str:
    """Chemistry-aware LaTeX for cell text: H2O -> H$_{2}$O, H+ -> H$^{+}$, -> -> $\\rightarrow$."""
    out = _latex_escape(text)
    out = out.replace("->", r"$\rightarrow$").replace("→", r"$\rightarrow$")
    out = re.sub(r"(?<=[A-Za-z)])(\d+)", r"$_{\1}$", out)
    out = re.sub(r"\bH\+", r"H$^{+}$", out)
    out = re.sub(r"\be-", r"e$^{-}$", out)
    out = re.sub(r"\bOH-", r"OH$^{-}$", out)
    return out


def to_latex(
    table: pd.DataFrame,
    decimals: int | None = None,
    caption: str | bool = True,
    label: str | None = "tab:limiting-potentials",
    missing: str = "--",
) -> str:
    r"""LaTeX ``table`` with ``booktabs`` rules (``\toprule``, ``\midrule``, ``\bottomrule``).

    Needs ``\usepackage{booktabs}`` in the preamble. Numbers are right-aligned; chemical formulas
    in text cells get subscripts; headers come from ``table.attrs["latex_headers"]`` when present.
    """
    table = _index_frame(table)
    decimals = check_decimals(decimals)
    headers = table.attrs.get("latex_headers", {})
    numeric = _numeric_columns(table)
    rows = _cells(table, decimals, missing)
    spec = "".join("r" if n else "l" for n in numeric)
    head = " & ".join(headers.get(c, _latex_escape(str(c))) for c in table.columns) + r" \\"
    chem = _chemistry_columns(table)
    body = [" & ".join(cell if num else (_latex_chem(cell) if ch else _latex_escape(cell)) for cell, num, ch in zip(r, numeric, chem))
            + r" \\" for r in rows]
    cap = table.attrs.get("caption", "") if caption is True else (caption or "")
    lines = [r"\begin{table}", r"  \centering"]
    if cap:
        lines.append(r"  \caption{" + _latex_chem(cap) + "}")
    if label:
        lines.append(r"  \label{" + label + "}")
    lines += [r"  \begin{tabular}{" + spec + "}", r"    \toprule", "    " + head, r"    \midrule"]
    lines += ["    " + b for b in body]
    lines += [r"    \bottomrule", r"  \end{tabular}", r"\end{table}"]
    return "\n".join(lines) + "\n"


def _html_chem(text: str) -> str:
    out = html.escape(text, quote=False)
    out = re.sub(r"(?<=[A-Za-z)])(\d+)", r"<sub>\1</sub>", out)
    out = out.replace("*", "<sup>*</sup>")
    out = re.sub(r"\bH\+", "H<sup>+</sup>", out)
    out = re.sub(r"\be-(?=\s|$)", "e<sup>−</sup>", out)
    out = out.replace("-&gt;", "→")
    return out


def to_html(
    table: pd.DataFrame,
    decimals: int | None = None,
    caption: str | bool = True,
    missing: str = "n/a",
    table_class: str = "ecatlab-table",
    chemistry: bool = True,
) -> str:
    """HTML ``<table>`` with a ``<caption>``; column docs become ``title`` tooltips on the headers.

    Well-formed (XML-parseable) markup; chemical formulas in text cells get ``<sub>``/``<sup>``
    when ``chemistry`` is true.
    """
    table = _index_frame(table)
    decimals = check_decimals(decimals)
    docs = table.attrs.get("columns", {})
    numeric = _numeric_columns(table)
    rows = _cells(table, decimals, missing)
    cap = table.attrs.get("caption", "") if caption is True else (caption or "")
    parts = [f'<table class="{html.escape(table_class)}">']
    if cap:
        parts.append(f"<caption>{html.escape(cap, quote=False)}</caption>")
    ths = "".join(
        f'<th scope="col" title="{html.escape(docs.get(c, ""))}">{html.escape(str(c), quote=False)}</th>' for c in table.columns
    )
    parts.append(f"<thead><tr>{ths}</tr></thead><tbody>")
    chem = _chemistry_columns(table)
    for r in rows:
        tds = "".join(
            f'<td class="num">{html.escape(cell, quote=False)}</td>' if num
            else f"<td>{_html_chem(cell) if (chemistry and ch) else html.escape(cell, quote=False)}</td>"
            for cell, num, ch in zip(r, numeric, chem)
        )
        parts.append(f"<tr>{tds}</tr>")
    parts.append("</tbody></table>")
    return "\n".join(parts) + "\n"


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
        "caption": table.attrs.get("caption", ""),
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
        Rounding of numbers in the text formats (0 to 12); ``None``: the per-column defaults.
        CSV rounds only when ``decimals`` is given; JSON keeps full precision.
    caption : bool or str
        Text formats: include the caption. CSV: with ``csv_comment`` the caption is the first
        line, prefixed with ``# ``.
    csv_comment : bool
        Put the caption as a ``#`` comment line above the CSV header.

    Notes
    -----
    CSV cells are neutralised against spreadsheet formula injection (OWASP "CSV Injection", see
    :mod:`ecatlab.safe_io`); Markdown cells escape ``|``; HTML is escaped; LaTeX specials escaped.
    """
    from ecatlab import safe_io
    from ecatlab.errors import OptionError, clip

    kind = FORMAT_SUFFIXES.get(str(fmt).lower())
    if kind is None:
        raise OptionError(f"unknown table format {clip(fmt)!r}; use one of {', '.join(TABLE_FORMATS)}")
    decimals = check_decimals(decimals)
    if kind == "csv":
        frame = _index_frame(table)
        c = table.attrs.get("conditions")
        if c and not csv_comment:
            extra = {"scale": c["scale"], "pH": c["pH"], "T [K]": c["temperature"]}
            frame = frame.assign(**{k: v for k, v in extra.items() if k not in frame.columns})
        if decimals is not None:
            frame = frame.round(decimals)
        text = safe_io.csv_text(frame, index=False, sep=sep, lineterminator="\n")
        cap = table.attrs.get("caption", "") if caption is True else (caption or "")
        if csv_comment and cap:
            text = "# " + cap.replace("\n", " ").replace("\r", " ") + "\n" + text
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
    or the suffix. CSV keeps full precision and appends the conditions as columns when absent.
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
