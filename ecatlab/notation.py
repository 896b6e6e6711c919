"""Chemical notation of ecatlab: species, steps and pathways.

Text is parsed with a small tokenizer, never evaluated. The grammar:

* an **adsorbate** is a formula followed by ``*``: ``OOH*``, ``COOH*``, ``NNH2*``. The formula is
  a label as well as a composition: ``OCHO*`` and ``COOH*`` are different species with the same
  elements (the order tells the binding atom);
* the **empty site** is ``*``;
* a **molecule** carries its phase: ``O2(g)``, ``H2O(l)``, ``HCOOH(aq)``;
* **protons and electrons** are the separate tokens ``H+`` and ``e-``; the hydroxide ion is
  ``OH-`` (aqueous); ``H+(aq)``/``OH-(aq)`` are accepted and normalised;
* a **term** is an optional positive coefficient and a species: ``2 H2O(l)``, ``2 *``, ``0.5 O2(g)``;
* a **step** is ``terms -> terms`` (``=>`` and ``→`` are accepted);
* a **pathway** is an ordered list of steps, one per line (``#`` starts a comment).

Element counts come from :class:`pymatgen.core.Composition`, which is used only to count
elements: ``Composition("OH").reduced_formula`` is ``'H2O2'``, so a composition is never used as a
species key. Every step is checked for element, charge and site balance on construction.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Iterable, Mapping

from ecatlab.errors import BalanceError, NotationError, PathwayError, require_text

__all__ = ["Species", "Step", "Pathway", "SITE", "PROTON", "ELECTRON", "HYDROXIDE", "read_pathway_file", "PATHWAY_FILE_LIMIT"]

#: Largest pathway file read, bytes (a pathway is a few lines; anything larger is not one).
PATHWAY_FILE_LIMIT = 1_000_000

_PHASES = ("g", "l", "aq")
_FORMULA_RE = re.compile(r"^(?:[A-Z][a-z]?\d*(?:\.\d+)?|\((?:[A-Z][a-z]?\d*)+\)\d*)+$")
_BALANCE_TOLERANCE = 1e-9


@lru_cache(maxsize=4096)
def _element_counts(formula: str) -> tuple[tuple[str, float], ...]:
    """Element counts of a formula via pymatgen (imported lazily), sorted by element symbol."""
    if not formula:
        return ()
    from pymatgen.core import Composition, Element

    try:
        comp = Composition(formula)
    except Exception as exc:  # pymatgen raises several types for bad formulas
        raise NotationError(formula, f"not a chemical formula ({exc})") from None
    unknown = [str(el) for el in comp.elements if not isinstance(el, Element)]
    if unknown:
        raise NotationError(formula, f"not a chemical formula (unknown element symbol(s) {', '.join(unknown)})")
    counts = {str(el): float(n) for el, n in comp.get_el_amt_dict().items()}
    return tuple(sorted(counts.items()))


@dataclass(frozen=True, order=True)
class Species:
    """One chemical species as written in ecatlab notation.

    Parameters
    ----------
    formula : str
        The formula label without phase marker (``"OOH"``, ``"H2O"``); empty for the bare site.
    phase : str
        ``"ads"`` (adsorbed, written ``X*``), ``"site"`` (``*``), ``"g"``, ``"l"``, ``"aq"``,
        ``"proton"`` (``H+``), ``"electron"`` (``e-``) or ``"hydroxide"`` (``OH-``).

    Examples
    --------
    >>> Species.parse("OOH*").key
    'OOH*'
    >>> Species.parse("H2O(l)").elements
    {'H': 2.0, 'O': 1.0}
    """

    formula: str
    phase: str

    def __post_init__(self) -> None:
        allowed = ("ads", "site", "proton", "electron", "hydroxide") + _PHASES
        if self.phase not in allowed:
            raise NotationError(self.formula, f"unknown phase {self.phase!r}; use one of {allowed}")

    # -- construction -------------------------------------------------------------------------
    @classmethod
    def parse(cls, text: str) -> "Species":
        """Parse one species token (no coefficient)."""
        return _parse_species(text)

    # -- identity -----------------------------------------------------------------------------
    @property
    def key(self) -> str:
        """Canonical text of the species, used as its key everywhere (tables, columns)."""
        if self.phase == "ads":
            return f"{self.formula}*"
        if self.phase == "site":
            return "*"
        if self.phase == "proton":
            return "H+"
        if self.phase == "electron":
            return "e-"
        if self.phase == "hydroxide":
            return "OH-"
        return f"{self.formula}({self.phase})"

    def __str__(self) -> str:
        return self.key

    # -- classification -----------------------------------------------------------------------
    @property
    def is_adsorbate(self) -> bool:
        """True for ``X*`` (not for the empty site)."""
        return self.phase == "ads"

    @property
    def is_site(self) -> bool:
        return self.phase == "site"

    @property
    def is_molecule(self) -> bool:
        """True for gas, liquid and neutral aqueous species (``(g)``, ``(l)``, ``(aq)``)."""
        return self.phase in _PHASES

    @property
    def is_charge_carrier(self) -> bool:
        """True for ``H+``, ``e-`` and ``OH-``, whose free energies follow from U and pH."""
        return self.phase in ("proton", "electron", "hydroxide")

    # -- composition --------------------------------------------------------------------------
    @property
    def elements(self) -> dict[str, float]:
        """Element counts (site and electron: empty)."""
        if self.phase == "proton":
            return {"H": 1.0}
        if self.phase == "hydroxide":
            return {"H": 1.0, "O": 1.0}
        if self.phase in ("site", "electron"):
            return {}
        return dict(_element_counts(self.formula))

    @property
    def charge(self) -> int:
        """Charge in units of the elementary charge."""
        return {"proton": 1, "electron": -1, "hydroxide": -1}.get(self.phase, 0)

    @property
    def sites(self) -> int:
        """Number of adsorption sites the species occupies (1 for ``X*`` and ``*``)."""
        return 1 if self.phase in ("ads", "site") else 0

    def latex(self) -> str:
        """Matplotlib mathtext label (:func:`ecatlab.chemtext.mathtext`), e.g. ``OOH*`` -> ``$\\mathrm{OOH}{\\ast}$``."""
        from ecatlab import chemtext

        return chemtext.mathtext(self.key)


SITE = Species("", "site")
PROTON = Species("H", "proton")
ELECTRON = Species("", "electron")
HYDROXIDE = Species("OH", "hydroxide")


def _parse_species(raw: str) -> Species:
    text = require_text(raw, "a species").strip()
    if not text:
        raise NotationError(raw, "empty species")
    if text == "*":
        return SITE
    if text in ("H+", "H+(aq)"):
        return PROTON
    if text in ("e-", "e"):
        return ELECTRON
    if text in ("OH-", "OH-(aq)"):
        return HYDROXIDE
    if text.endswith("*"):
        formula = text[:-1]
        if formula.endswith("*"):
            raise NotationError(raw, "multi-site labels like 'X**' are not supported; write '2 *' terms instead")
        _check_formula(raw, formula)
        return Species(formula, "ads")
    m = re.fullmatch(r"(.+)\((g|l|aq)\)", text)
    if m:
        formula = m.group(1)
        _check_formula(raw, formula)
        return Species(formula, m.group(2))
    if re.search(r"[+-]$", text):
        raise NotationError(raw, "only H+, e- and OH- are supported as charged species")
    if _FORMULA_RE.match(text):
        raise NotationError(
            raw, "a molecule needs its phase: write e.g. 'O2(g)', 'H2O(l)' or 'HCOOH(aq)'; an adsorbate ends in '*'"
        )
    raise NotationError(raw, "not a species; adsorbates end in '*', molecules carry (g), (l) or (aq)")


def _check_formula(raw: str, formula: str) -> None:
    if not formula or not _FORMULA_RE.match(formula):
        raise NotationError(raw, f"{formula!r} is not a formula (element symbols with optional counts)")
    _element_counts(formula)  # raises NotationError on unknown elements


# ------------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Step:
    """One elementary step ``reactants -> products``.

    Coefficients are stored per side (positive numbers). Construction checks element, charge and
    site balance and raises :class:`~ecatlab.errors.BalanceError` with the imbalance per element.

    Parameters
    ----------
    reactants, products : tuple of (Species, float)
        Species and their positive stoichiometric coefficients.
    text : str, optional
        The text the step was parsed from (kept for messages).
    """

    reactants: tuple[tuple[Species, float], ...]
    products: tuple[tuple[Species, float], ...]
    text: str = field(default="", compare=False)

    def __post_init__(self) -> None:
        for side in (self.reactants, self.products):
            for sp, coef in side:
                if not (coef > 0):
                    raise NotationError(self.text or str(sp), f"coefficient of {sp.key} must be positive, got {coef}")
        imbalance: dict[str, float] = {}
        for key, value in self._conservation().items():
            if abs(value) > _BALANCE_TOLERANCE:
                imbalance[key] = value
        if imbalance:
            raise BalanceError(self.text or self.equation, imbalance)
        if not self.reactants or not self.products:
            raise NotationError(self.text, "a step needs species on both sides of '->'")

    # -- parsing ------------------------------------------------------------------------------
    @classmethod
    def parse(cls, text: str) -> "Step":
        """Parse ``"OOH* + H+ + e- -> O* + H2O(l)"``."""
        original = require_text(text, "a step")
        line = text.replace("→", "->").replace("=>", "->")
        if line.count("->") != 1:
            raise NotationError(original, "a step needs exactly one '->' between reactants and products")
        left, right = line.split("->")
        reactants = _parse_side(original, left)
        products = _parse_side(original, right)
        return cls(reactants, products, text=original.strip())

    # -- derived quantities -------------------------------------------------------------------
    def net(self) -> dict[Species, float]:
        """Net stoichiometry: products positive, reactants negative (species cancelling drop out)."""
        out: dict[Species, float] = {}
        for sp, c in self.reactants:
            out[sp] = out.get(sp, 0.0) - c
        for sp, c in self.products:
            out[sp] = out.get(sp, 0.0) + c
        return {sp: c for sp, c in out.items() if abs(c) > _BALANCE_TOLERANCE}

    def _conservation(self) -> dict[str, float]:
        totals: dict[str, float] = {}
        for sp, c in self.net().items():
            for el, n in sp.elements.items():
                totals[el] = totals.get(el, 0.0) + c * n
            if sp.charge:
                totals["charge"] = totals.get("charge", 0.0) + c * sp.charge
            if sp.sites:
                totals["sites"] = totals.get("sites", 0.0) + c * sp.sites
        return totals

    @property
    def electrons_transferred(self) -> float:
        """Electrons consumed by the step (positive: reduction; negative: oxidation; 0: chemical)."""
        return -self.net().get(ELECTRON, 0.0)

    @property
    def is_electrochemical(self) -> bool:
        return abs(self.electrons_transferred) > _BALANCE_TOLERANCE

    @property
    def equation(self) -> str:
        """Canonical text of the step."""
        return f"{_format_side(self.reactants)} -> {_format_side(self.products)}"

    @property
    def species(self) -> tuple[Species, ...]:
        """All species of the step, reactants first, in order of appearance."""
        seen: list[Species] = []
        for sp, _ in self.reactants + self.products:
            if sp not in seen:
                seen.append(sp)
        return tuple(seen)

    def reversed(self) -> "Step":
        """The reverse step (products become reactants)."""
        return Step(self.products, self.reactants, text=f"{_format_side(self.products)} -> {_format_side(self.reactants)}")

    def __str__(self) -> str:
        return self.equation


def _parse_side(original: str, side: str) -> tuple[tuple[Species, float], ...]:
    terms: dict[Species, float] = {}
    order: list[Species] = []
    # split on '+' that separates terms: a '+' followed by whitespace or end, not the one in 'H+'
    tokens = re.split(r"(?<=\s)\+(?=\s)", " " + side.strip() + " ")
    for token in tokens:
        token = token.strip()
        if not token:
            raise NotationError(original, "empty term (two '+' in a row, or a side without species)")
        hint = _coefficient_hint(token)
        if hint:
            raise NotationError(original, hint)
        m = re.fullmatch(r"(\d+(?:\.\d+)?|\d*\.\d+)?\s*(.+)", token, flags=re.S)
        coef_text, sp_text = m.group(1), m.group(2)
        coef = float(coef_text) if coef_text else 1.0
        if coef_text and not re.match(r"\s", token[len(coef_text):len(coef_text) + 1] or " ") and sp_text != "*":
            raise NotationError(original, f"put a space between coefficient and species in {token!r} (e.g. '2 H2O(l)')")
        try:
            sp = Species.parse(sp_text)
        except NotationError as exc:
            raise NotationError(original, f"in term {token!r}: {exc.reason}") from None
        if sp not in terms:
            order.append(sp)
            terms[sp] = 0.0
        terms[sp] += coef
    return tuple((sp, terms[sp]) for sp in order)


_UNICODE_FRACTIONS = {"½": "0.5", "¼": "0.25", "¾": "0.75", "⅓": "0.333333", "⅔": "0.666667"}


def _coefficient_hint(token: str) -> str | None:
    """The fix for coefficient forms the grammar does not take (fractions, exponents, signs), or None."""
    from ecatlab.errors import clip

    shown = clip(token)
    m = re.match(r"^(\d+)\s*/\s*(\d+)\s*(\S.*)?$", token)
    if m:
        num, den = int(m.group(1)), int(m.group(2))
        rest = m.group(3) or "O2(g)"
        if den == 0:
            return f"coefficient {m.group(1)}/{m.group(2)} in {shown!r} divides by zero; write a positive decimal, e.g. '0.5 {rest}'"
        return f"write fractions as decimals: {f'{num / den:.6g} {rest}'!r} instead of {shown!r}"
    if token[:1] in _UNICODE_FRACTIONS:
        return f"write fractions as decimals: {f'{_UNICODE_FRACTIONS[token[0]]} {token[1:].strip()}'!r} instead of {shown!r}"
    m = re.match(r"^(\d+(?:\.\d*)?|\.\d+)[eE]([+-]?\d+)\s+(\S.*)$", token)
    if m:
        value = float(m.group(1) + "e" + m.group(2))
        return f"write the coefficient as a plain decimal ({f'{value:g} {m.group(3)}'!r}), not in exponent notation ({shown!r})"
    m = re.match(r"^([+-])\s*(\d+(?:\.\d+)?|\.\d+)\s+(\S.*)$", token)
    if m:
        if m.group(1) == "-":
            return f"coefficients are positive: move {m.group(3)!r} to the other side of '->' instead of writing {shown!r}"
        return f"write the coefficient without a sign: {f'{m.group(2)} {m.group(3)}'!r} instead of {shown!r}"
    return None


def _format_coef(c: float) -> str:
    if abs(c - 1.0) < 1e-12:
        return ""
    if abs(c - round(c)) < 1e-12:
        return f"{int(round(c))} "
    return f"{c:g} "


def _format_side(side: Iterable[tuple[Species, float]]) -> str:
    return " + ".join(f"{_format_coef(c)}{sp.key}" for sp, c in side)


# ------------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Pathway:
    """An ordered list of steps leading from reactants to products.

    The free energy of state *k* is the running sum of the first *k* step free energies, so the
    steps need not repeat spectator species. All electrochemical steps of one pathway must run in
    the same direction (all reductions or all oxidations); chemical steps (no ``e-``) may appear
    anywhere and are treated as potential independent.

    Parameters
    ----------
    name : str
        Key or short name (``"orr-4e"``).
    steps : tuple of Step
    description : str
        One sentence for listings.
    state_labels : tuple of str, optional
        Labels of the ``len(steps) + 1`` states for diagrams; derived from the steps if omitted.
    """

    name: str
    steps: tuple[Step, ...]
    description: str = ""
    state_labels: tuple[str, ...] | None = None

    def __post_init__(self) -> None:
        if not self.steps:
            raise PathwayError(f"pathway {self.name!r} has no steps")
        signs = {1 if s.electrons_transferred > 0 else -1 for s in self.steps if s.is_electrochemical}
        if len(signs) > 1:
            raise PathwayError(
                f"pathway {self.name!r} mixes reduction and oxidation steps; the CHE limiting potential is "
                "defined for one direction. Split it into two pathways or reverse the odd steps"
            )
        if not signs:
            raise PathwayError(f"pathway {self.name!r} has no electrochemical step (no 'e-' anywhere)")
        if self.state_labels is not None and len(self.state_labels) != len(self.steps) + 1:
            raise PathwayError(
                f"pathway {self.name!r}: {len(self.state_labels)} state labels given for "
                f"{len(self.steps)} steps; give one label per state ({len(self.steps) + 1})"
            )
        self._check_chain()
        overall = self.overall_net()
        leftover = [sp.key for sp, c in overall.items() if sp.is_adsorbate]
        if leftover:
            raise PathwayError(
                f"pathway {self.name!r} does not return to the clean surface: the adsorbates "
                f"{', '.join(leftover)} remain after the last step; a catalytic pathway must consume every "
                "intermediate it forms"
            )

    def _check_chain(self) -> None:
        """Every adsorbed intermediate a step consumes was formed by an earlier step (the steps chain)."""
        present: dict[Species, float] = {}
        for i, step in enumerate(self.steps):
            for sp, coef in step.reactants:
                if sp.is_adsorbate and present.get(sp, 0.0) + _BALANCE_TOLERANCE < coef:
                    later = [j + 1 for j in range(i + 1, len(self.steps)) if self.steps[j].net().get(sp, 0.0) > _BALANCE_TOLERANCE]
                    where = (f"it is formed only later, in step {later[0]}" if later else "no step forms it")
                    raise PathwayError(
                        f"pathway {self.name!r}: step {i + 1} ({step.equation}) consumes {sp.key} before it exists; "
                        f"{where}. Order the steps so that each intermediate is formed before it is consumed "
                        "(the first step starts from the clean site '*' and molecules)"
                    )
            for sp, coef in step.net().items():
                if sp.is_adsorbate:
                    present[sp] = present.get(sp, 0.0) + coef

    @classmethod
    def parse(cls, text: str, name: str = "custom", description: str = "", state_labels: Iterable[str] | None = None) -> "Pathway":
        """Read one step per line; blank lines and text after ``#`` are ignored."""
        require_text(text, f"the text of pathway {name!r}")
        require_text(name, "a pathway name")
        steps = []
        for lineno, line in enumerate(text.splitlines(), start=1):
            line = line.split("#", 1)[0].strip()
            if not line:
                continue
            try:
                steps.append(Step.parse(line))
            except BalanceError as exc:
                raise BalanceError(f"{exc.step} (line {lineno} of pathway {name!r})", exc.imbalance) from None
            except NotationError as exc:
                raise NotationError(exc.text, f"{exc.reason} (line {lineno} of pathway {name!r})") from None
        if not steps:
            raise PathwayError(f"pathway {name!r}: no steps found in the text")
        return cls(name, tuple(steps), description, tuple(state_labels) if state_labels is not None else None)

    # -- properties ---------------------------------------------------------------------------
    @property
    def direction(self) -> str:
        """``"reduction"`` or ``"oxidation"``."""
        return "reduction" if self.total_electrons > 0 else "oxidation"

    @property
    def total_electrons(self) -> float:
        """Net electrons consumed over the pathway (negative for oxidation)."""
        return float(sum(s.electrons_transferred for s in self.steps))

    @property
    def electrochemical_mask(self) -> tuple[bool, ...]:
        return tuple(s.is_electrochemical for s in self.steps)

    def overall_net(self) -> dict[Species, float]:
        """Net stoichiometry of the whole pathway (products positive)."""
        total: dict[Species, float] = {}
        for step in self.steps:
            for sp, c in step.net().items():
                total[sp] = total.get(sp, 0.0) + c
        return {sp: c for sp, c in total.items() if abs(c) > _BALANCE_TOLERANCE}

    def overall_step(self) -> Step:
        """The overall reaction as a :class:`Step` (adsorbates cancel; bare sites dropped)."""
        net = {sp: c for sp, c in self.overall_net().items() if not sp.is_site}
        reactants = tuple((sp, -c) for sp, c in net.items() if c < 0)
        products = tuple((sp, c) for sp, c in net.items() if c > 0)
        return Step(reactants, products, text=f"overall reaction of {self.name}")

    @property
    def adsorbates(self) -> tuple[Species, ...]:
        """Adsorbates appearing in the pathway, in order of first appearance."""
        seen: list[Species] = []
        for step in self.steps:
            for sp in step.species:
                if sp.is_adsorbate and sp not in seen:
                    seen.append(sp)
        return tuple(seen)

    @property
    def molecules(self) -> tuple[Species, ...]:
        seen: list[Species] = []
        for step in self.steps:
            for sp in step.species:
                if sp.is_molecule and sp not in seen:
                    seen.append(sp)
        return tuple(seen)

    @property
    def labels(self) -> tuple[str, ...]:
        """State labels (given, or derived: initial reactants, then each step's adsorbates/products)."""
        if self.state_labels is not None:
            return self.state_labels
        out = [_state_label(self.steps[0].reactants)]
        for step in self.steps:
            out.append(_state_label(step.products))
        return tuple(out)

    @property
    def step_names(self) -> tuple[str, ...]:
        """Short unique names of the steps, used as table columns: ``"2: OOH* → O* + H2O(l)"``.

        Built from each step itself (what it consumes and what it forms, without H+, e- and empty
        sites), not from the state labels, which count everything released so far."""
        return tuple(f"{i + 1}: {_step_side(step.reactants)} → {_step_side(step.products)}" for i, step in enumerate(self.steps))

    def to_text(self) -> str:
        """One step per line, parseable by :meth:`parse`."""
        return "\n".join(s.equation for s in self.steps)

    def to_dict(self) -> dict:
        """Plain-data form with a schema version (round-trips through :meth:`from_dict`)."""
        return {
            "schema": "ecatlab.pathway/1",
            "name": self.name,
            "description": self.description,
            "steps": [s.equation for s in self.steps],
            "state_labels": list(self.state_labels) if self.state_labels is not None else None,
        }

    @classmethod
    def from_dict(cls, data: Mapping) -> "Pathway":
        if data.get("schema") != "ecatlab.pathway/1":
            raise PathwayError(f"unknown pathway schema {data.get('schema')!r}; expected 'ecatlab.pathway/1'")
        labels = data.get("state_labels")
        return cls(
            data["name"],
            tuple(Step.parse(s) for s in data["steps"]),
            data.get("description", ""),
            tuple(labels) if labels is not None else None,
        )

    def __len__(self) -> int:
        return len(self.steps)

    def _repr_html_(self) -> str:
        from html import escape

        from ecatlab import chemtext

        rows = "".join(
            f"<tr><td>{i + 1}</td><td>{chemtext.html(s.equation)}</td><td>{'electrochemical' if s.is_electrochemical else 'chemical'}</td></tr>"
            for i, s in enumerate(self.steps)
        )
        return (
            f"<b>{escape(self.name)}</b> ({self.direction}, {abs(self.total_electrons):g} {chemtext.html('e-')}): "
            f"{escape(self.description)}<table><tr><th>#</th><th>step</th><th>kind</th></tr>{rows}</table>"
        )


def _step_side(side: Iterable[tuple[Species, float]]) -> str:
    """One side of a step for its short name: adsorbates and molecules with coefficients ('*' if none)."""
    items = [(sp, c) for sp, c in side if not sp.is_charge_carrier and not sp.is_site]
    ads = [(sp, c) for sp, c in items if sp.is_adsorbate] + [(sp, c) for sp, c in items if not sp.is_adsorbate]
    return " + ".join(f"{_format_coef(c)}{sp.key}" for sp, c in ads) if ads else "*"


def _state_label(side: Iterable[tuple[Species, float]]) -> str:
    items = [(sp, c) for sp, c in side if not sp.is_charge_carrier]
    ads = [(sp, c) for sp, c in items if sp.is_adsorbate]
    chosen = ads if ads else [(sp, c) for sp, c in items if not sp.is_site]
    if not chosen:
        return "*"
    return " + ".join(f"{_format_coef(c)}{sp.key}" for sp, c in chosen)


def read_pathway_file(path, name: str | None = None, description: str = "") -> Pathway:
    """Read a pathway file: UTF-8 text, one step per line, ``#`` comments.

    The pathway is named after the file (``my-orr.txt`` -> ``my-orr``) unless ``name`` is given;
    a name that is a built-in pathway key is refused, so results of a custom pathway are never
    mistaken for the built-in one.

    Raises
    ------
    PathwayError
        File not found, a folder, binary or not UTF-8, larger than :data:`PATHWAY_FILE_LIMIT`,
        a name that shadows a built-in key, or any problem of the steps (line numbers given).
    """
    import os

    from ecatlab.errors import clip, clip_path
    from ecatlab.pathways import BUILTIN_PATHWAYS

    shown = clip_path(os.fspath(path))
    if not os.path.exists(path):
        raise PathwayError(f"{shown}: pathway file not found; check the path")
    if os.path.isdir(path):
        raise PathwayError(f"{shown}: is a folder; give a text file with one step per line")
    size = os.path.getsize(path)
    if size > PATHWAY_FILE_LIMIT:
        raise PathwayError(f"{shown}: {size} bytes is too large for a pathway file (limit {PATHWAY_FILE_LIMIT}); give a text file with one step per line")
    with open(path, "rb") as fh:
        data = fh.read()
    nul = data.find(bytes(1))
    if nul >= 0:
        raise PathwayError(f"{shown}: binary file (NUL byte at offset {nul}); a pathway file is plain text with one step per line")
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        raise PathwayError(f"{shown}, line {line}: not UTF-8 text (byte 0x{data[exc.start]:02x} at offset {exc.start}); "
                           "save the file as UTF-8 plain text") from None
    stem = name if name is not None else os.path.splitext(os.path.basename(os.fspath(path)))[0]
    if not stem.strip() or re.search(r"[\x00-\x1f\x7f]", stem):
        raise PathwayError(f"{shown}: the pathway name {clip(stem)!r} is empty or holds control characters; rename the file")
    if stem in BUILTIN_PATHWAYS:
        raise PathwayError(
            f"{shown}: the pathway name {stem!r} is a built-in pathway key; rename the file (e.g. my-{stem}.txt) so its "
            "results are not mistaken for the built-in pathway"
        )
    try:
        return Pathway.parse(text, name=stem, description=description or f"from {os.path.basename(os.fspath(path))}")
    except (NotationError, PathwayError) as exc:
        raise PathwayError(f"{shown}: {exc}") from None
