r"""A mean-field microkinetic model built from what an ecatlab user already has.

Input: one or more pathways (built-in keys, :class:`~ecatlab.notation.Pathway` objects, a network
route from :meth:`ecatlab.network.ReactionNetwork.route_pathway`, or a whole
:class:`~ecatlab.network.ReactionNetwork`), an energy table, the conditions (scale, pH, T), the
activities of the molecules and, optionally, transition-state data (:class:`~ecatlab.kinetics.rates.Barriers`).

The model
---------
Surface species are the adsorbates ``X*`` (one site each) and the empty site ``*``; coverages
obey the site balance :math:`\theta_* + \sum_j \theta_j = 1`. Step *i* runs at the net rate (per
site, 1/s)

.. math::

    r_i = k_{f,i} \prod_{j} \theta_j^{\,\nu^R_{ij}} \prod_M a_M^{\,\nu^R_{iM}}
        - k_{b,i} \prod_{j} \theta_j^{\,\nu^P_{ij}} \prod_M a_M^{\,\nu^P_{iM}}

with the orders :math:`\nu^R, \nu^P` taken from the step's *net* stoichiometry (spectator sites
cancel), the molecules' activities :math:`a_M` (gases: :math:`p/p^\circ` with :math:`p^\circ` = 1 bar;
solutes: :math:`c/c^\circ` with :math:`c^\circ` = 1 mol/L; H2O(l): 1), and the rate constants of
:mod:`ecatlab.kinetics.rates`. H+, e- and OH- do not appear in the rate law: their free energies
(the pH on the chosen scale, and the potential) enter through the CHE step free energy
:math:`\Delta G_i(U) = a_i + n_i U` from :meth:`ecatlab.che.CompiledPathway.affine` and
:func:`ecatlab.che.kernel.step_free_energy`. Detailed balance holds exactly, so the net current
vanishes at the equilibrium potential of every pathway when all activities are 1.

Optional lateral interactions add :math:`\sum_k \varepsilon_{jk}\theta_k` (eV) to the free energy
of adsorbate *j*; a step's free energy then changes by :math:`\sum_j \nu_{ij}\sum_k\varepsilon_{jk}\theta_k`
and its forward barrier by the same amount times its barrier slope (beta, gamma, 1 or 0).

Results are theoretical estimates: mean-field kinetics on CHE free energies, no mass transport,
no double-layer or field effects beyond the symmetry factor.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field
from typing import Iterable, Mapping, Sequence

import numpy as np
import pandas as pd

from ecatlab.che import kernel
from ecatlab.che.conditions import Conditions
from ecatlab.che.engine import compile_steps
from ecatlab.constants import BOLTZMANN_EV
from ecatlab.energies import EnergyTable, as_energy_table
from ecatlab.errors import KineticsInputError, MissingDataWarning, MissingSpeciesError
from ecatlab.kinetics.rates import BarrierSettings, Barriers, collision_prefactor, tst_prefactor
from ecatlab.notation import ELECTRON, HYDROXIDE, PROTON, SITE, Pathway, Species, Step
from ecatlab.pathways import resolve

__all__ = ["KineticModel", "build_model", "PathwayInfo"]

_WATER = "H2O(l)"


@dataclass(frozen=True)
class PathwayInfo:
    """One overall reaction of the model: its product and the electrons it needs.

    Attributes
    ----------
    name : str
    direction : {"reduction", "oxidation"}
    product : str
        The molecule that names the reaction's product (``"H2O2(aq)"``; ``"H2O(l)"`` only when water
        is the only product, as in the 4-electron ORR).
    electrons_per_product : float
        Electrons consumed per product molecule (negative for an oxidation).
    equilibrium_potential : float
        U_eq of the overall reaction with all activities 1, V vs the model's scale (CHE kernel).
    equilibrium_potential_at_activities : float
        U_eq with the model's activities (Nernst), V vs the model's scale.
    """

    name: str
    direction: str
    product: str
    electrons_per_product: float
    equilibrium_potential: float
    equilibrium_potential_at_activities: float


@dataclass(frozen=True, eq=False)
class KineticModel:
    """Arrays of a microkinetic model for many surfaces at once (build with :func:`build_model`).

    Attributes
    ----------
    steps : tuple of Step
        The elementary steps (duplicates across pathways merged).
    step_kinds : tuple of str
        ``electrochemical``, ``surface``, ``adsorption`` or ``solution`` per step.
    species : tuple of str
        Surface species: the adsorbates, then ``"*"`` last.
    surfaces : tuple of str
    reactant_orders, product_orders : ndarray (n_steps, n_species)
        Orders of the surface species in the forward and backward rate laws.
    ln_activity_forward, ln_activity_backward : ndarray (n_steps,)
        ln of the product of the molecules' activities on each side.
    electrons : ndarray (n_steps,)
        Electrons consumed per step (negative: released).
    affine_a : ndarray (n_surfaces, n_steps)
        a_i of dG_i(U) = a_i + n_i U on the model's scale, eV.
    raw_offset, raw_slope, ln_prefactor : ndarray (n_surfaces, n_steps)
        Raw forward barrier offset + slope * dG(U) (eV) and ln prefactor (1/s).
    user_barrier : ndarray of bool (n_surfaces, n_steps)
        True where the barrier came from the user's table; False = estimated.
    product_stoichiometry : ndarray (n_steps, n_products)
        Net molecules of each product formed per step.
    pathways : tuple of PathwayInfo
    products : tuple of str
    electrons_per_product : ndarray (n_products,)
    interactions : ndarray (n_species, n_species) or None
        Lateral-interaction matrix epsilon_jk, eV per unit coverage (row/column "*" zero).
    conditions : Conditions
    activities : dict
    settings : BarrierSettings
    """

    steps: tuple[Step, ...]
    step_kinds: tuple[str, ...]
    species: tuple[str, ...]
    surfaces: tuple[str, ...]
    reactant_orders: np.ndarray
    product_orders: np.ndarray
    ln_activity_forward: np.ndarray
    ln_activity_backward: np.ndarray
    electrons: np.ndarray
    affine_a: np.ndarray
    raw_offset: np.ndarray
    raw_slope: np.ndarray
    ln_prefactor: np.ndarray
    user_barrier: np.ndarray
    product_stoichiometry: np.ndarray
    pathways: tuple[PathwayInfo, ...]
    products: tuple[str, ...]
    electrons_per_product: np.ndarray
    interactions: np.ndarray | None
    conditions: Conditions
    activities: dict = field(default_factory=dict)
    settings: BarrierSettings = field(default_factory=BarrierSettings)
    references: str = ""
    energy_source: str = ""
    notes: tuple[str, ...] = ()

    # -- sizes --------------------------------------------------------------------------------
    @property
    def n_steps(self) -> int:
        return len(self.steps)

    @property
    def n_species(self) -> int:
        return len(self.species)

    @property
    def net_stoichiometry(self) -> np.ndarray:
        """(n_steps, n_species): products minus reactants of the surface species."""
        return self.product_orders - self.reactant_orders

    @property
    def temperature(self) -> float:
        return self.conditions.temperature

    @property
    def kT(self) -> float:
        """k_B T in eV."""
        return BOLTZMANN_EV * self.conditions.temperature

    @property
    def step_equations(self) -> tuple[str, ...]:
        return tuple(s.equation for s in self.steps)

    @property
    def barrier_source(self) -> np.ndarray:
        """(n_surfaces, n_steps) text: 'user' or 'estimated'."""
        return np.where(self.user_barrier, "user", "estimated")

    @property
    def any_estimated(self) -> bool:
        return bool((~self.user_barrier).any())

    def step_free_energies(self, potentials) -> np.ndarray:
        """dG_i(U) in eV, shape (n_surfaces, n_potentials, n_steps), from the CHE kernel."""
        u = np.atleast_1d(np.asarray(potentials, dtype=float))
        return kernel.step_free_energy(self.affine_a[:, None, :], self.electrons, u[None, :])

    def subset(self, surfaces: Sequence[str]) -> "KineticModel":
        """The same model restricted to some surfaces (in the order given)."""
        index = {s: i for i, s in enumerate(self.surfaces)}
        missing = [s for s in surfaces if s not in index]
        if missing:
            raise KineticsInputError(f"unknown surface(s) {missing}; the model has {list(self.surfaces)}")
        rows = np.array([index[s] for s in surfaces], dtype=int)
        import dataclasses

        return dataclasses.replace(
            self, surfaces=tuple(surfaces), affine_a=self.affine_a[rows], raw_offset=self.raw_offset[rows],
            raw_slope=self.raw_slope[rows], ln_prefactor=self.ln_prefactor[rows], user_barrier=self.user_barrier[rows],
        )

    def describe(self) -> str:
        est = "some barriers ESTIMATED (" + self.settings.describe() + ")" if self.any_estimated else "all barriers from user input"
        return (
            f"{self.n_steps} steps, {len(self.surfaces)} surfaces, {self.conditions.describe()}; {est}; "
            f"activities: {', '.join(f'{k} {v:g}' for k, v in sorted(self.activities.items())) or 'all 1'}"
        )

    def step_table(self) -> pd.DataFrame:
        """One row per step: equation, kind, electrons, barrier source counts."""
        return pd.DataFrame(
            {
                "step": list(self.step_equations),
                "kind": list(self.step_kinds),
                "electrons": self.electrons,
                "user_barrier_surfaces": self.user_barrier.sum(axis=0),
                "estimated_barrier_surfaces": (~self.user_barrier).sum(axis=0),
            },
            index=pd.RangeIndex(1, self.n_steps + 1, name="index"),
        )

    def __repr__(self) -> str:
        return f"KineticModel({self.describe()})"


# ------------------------------------------------------------------------------------------------
def _step_key(step: Step) -> frozenset:
    return frozenset((sp, round(c, 9)) for sp, c in step.net().items())


def _collect_steps(model_input) -> tuple[list[Step], list[tuple[str, str, dict, float]], list[str]]:
    """Steps (deduplicated, reverse duplicates merged) and per-pathway (name, direction, overall net, electrons)."""
    from ecatlab.network import ReactionNetwork

    notes: list[str] = []
    overall: list[tuple[str, str, dict, float]] = []
    if not isinstance(model_input, (str, Pathway, ReactionNetwork)) and len(list(model_input)) and all(isinstance(s, Step) for s in model_input):
        # a bare mechanism: elementary steps without a pathway (no product bookkeeping)
        raw_steps = list(model_input)
        notes.append("model built from bare steps: no overall reaction, so no faradaic efficiency, onset or G_max read-out")
    else:
        items = [model_input] if isinstance(model_input, (str, Pathway, ReactionNetwork)) else list(model_input)
        if not items:
            raise KineticsInputError("give at least one pathway (key, Pathway or network route) or a ReactionNetwork")
        raw_steps = []
        for item in items:
            if isinstance(item, ReactionNetwork):
                raw_steps.extend(e.step for e in item.edges)
                for product in item.products:
                    routes = item.routes(product)
                    if not routes:
                        continue
                    route = item.route_pathway(routes[0])
                    net = route.overall_net()
                    coef = net.get(Species.parse(product), 0.0)
                    if coef <= 0:
                        continue
                    overall.append((f"{item.reactant}->{product}", route.direction, {"product": product, "overall": net}, route.total_electrons / coef))
                continue
            path = resolve(item)
            raw_steps.extend(path.steps)
            overall.append((path.name, path.direction, path.overall_net(), path.total_electrons))
    steps: list[Step] = []
    seen: dict[frozenset, int] = {}
    for s in raw_steps:
        key = _step_key(s)
        rkey = _step_key(s.reversed())
        if key in seen:
            continue
        if rkey in seen:
            notes.append(f"step {s.equation!r} is the reverse of {steps[seen[rkey]].equation!r}; kept once")
            continue
        seen[key] = len(steps)
        steps.append(s)
    return steps, overall, notes


def _classify(step: Step) -> str:
    if step.is_electrochemical:
        return "electrochemical"
    net = step.net()
    mols_in = [sp for sp, c in net.items() if sp.is_molecule and c < 0 and sp.key != _WATER]
    mols_out = [sp for sp, c in net.items() if sp.is_molecule and c > 0 and sp.key != _WATER]
    if len(mols_in) + len(mols_out) == 0:
        return "surface"
    if len(mols_in) + len(mols_out) == 1:
        sp = (mols_in + mols_out)[0]
        return "adsorption" if sp.phase == "g" else "solution"
    return "solution"


def _molar_mass(sp: Species) -> float:
    from pymatgen.core import Element

    return float(sum(float(Element(el).atomic_mass) * n for el, n in sp.elements.items()))


def _check_activities(activities, molecules: Iterable[str]) -> dict[str, float]:
    out: dict[str, float] = {}
    known = set(molecules)
    for key, value in dict(activities or {}).items():
        k = Species.parse(key).key if isinstance(key, str) else str(key)
        if k not in known:
            raise KineticsInputError(f"activity given for {key!r}, which no step of the model uses; molecules of the model: {sorted(known)}")
        try:
            v = float(value)
        except (TypeError, ValueError):
            raise KineticsInputError(f"activity of {k} must be a number (gas: p/1 bar, solute: c/(1 mol/L)), got {value!r}") from None
        if not math.isfinite(v) or v < 0:
            raise KineticsInputError(f"activity of {k} must be finite and >= 0, got {value!r}")
        if k == _WATER and v != 1.0:
            raise KineticsInputError("the activity of H2O(l) is 1 by definition of the CHE reference; leave it out")
        out[k] = v
    return out


def _ln(x: float) -> float:
    return math.log(x) if x > 0 else -math.inf


def build_model(
    energies,
    pathways,
    conditions: Conditions | None = None,
    *,
    barriers=None,
    activities: Mapping[str, float] | None = None,
    settings: BarrierSettings | None = None,
    interactions=None,
    surfaces: Iterable[str] | None = None,
    on_missing: str = "raise",
    scale: str | None = None,
    pH: float | None = None,
    temperature: float | None = None,
) -> KineticModel:
    """Build a :class:`KineticModel` for every surface of an energy table.

    Parameters
    ----------
    energies : EnergyTable, DataFrame or path
        Adsorption free energies, eV (read at the conditions' temperature).
    pathways : str, Pathway, list of them, or ReactionNetwork
        The mechanism: one pathway, several (competing products, HER as a side reaction; shared
        steps are merged), a network route, or a whole network.
    conditions : Conditions, optional
        Scale, pH and temperature (``scale=``, ``pH=``, ``temperature=`` override its fields).
    barriers : Barriers, DataFrame or CSV path, optional
        Activation free energies per (surface, step); see :class:`~ecatlab.kinetics.rates.Barriers`.
        Steps without a row get estimated barriers (flagged ``estimated``).
    activities : dict, optional
        Molecule key -> activity: gases p/(1 bar), solutes c/(1 mol/L). Default 1 for every molecule.
    settings : BarrierSettings, optional
        Parameters of the barrier estimates and the site density.
    interactions : DataFrame or dict, optional
        Lateral interactions eps_jk (eV per unit coverage of k on the free energy of j): a square
        DataFrame indexed by adsorbates, or ``{("O*", "O*"): 0.2, ...}``.
    surfaces : list of str, optional
    on_missing : {"raise", "drop"}
        Surfaces lacking an adsorbate: raise (default) or drop with a warning.

    Returns
    -------
    KineticModel
    """
    cond = Conditions.coerce(conditions, scale=scale, pH=pH, temperature=temperature)
    settings = settings or BarrierSettings()
    table = as_energy_table(energies, cond.temperature)
    steps, overall, notes = _collect_steps(pathways)
    adsorbates: list[str] = []
    molecules: list[str] = []
    for s in steps:
        for sp in s.species:
            if sp.is_adsorbate and sp.key not in adsorbates:
                adsorbates.append(sp.key)
            if sp.is_molecule and sp.key not in molecules:
                molecules.append(sp.key)
    species = tuple(adsorbates) + ("*",)
    col = {k: j for j, k in enumerate(species)}
    n_steps, n_sp = len(steps), len(species)
    act = _check_activities(activities, molecules)
    full_act = {m: act.get(m, 1.0) for m in molecules}
    R = np.zeros((n_steps, n_sp))
    P = np.zeros((n_steps, n_sp))
    lnf = np.zeros(n_steps)
    lnb = np.zeros(n_steps)
    kinds = []
    for i, s in enumerate(steps):
        for sp, c in s.net().items():
            if sp.is_adsorbate or sp.is_site:
                (R if c < 0 else P)[i, col[sp.key]] += abs(c)
            elif sp.is_molecule:
                if c < 0:
                    lnf[i] += abs(c) * _ln(full_act[sp.key])
                else:
                    lnb[i] += abs(c) * _ln(full_act[sp.key])
        kinds.append(_classify(s))

    # surfaces and energies
    if surfaces is None:
        names = list(table.surfaces)
    else:
        names = [surfaces] if isinstance(surfaces, str) else list(surfaces)
        unknown = [s for s in names if s not in set(table.surfaces)]
        if unknown:
            raise KineticsInputError(f"unknown surface(s) {unknown}; the energy table has {table.surfaces}")
    compiled = compile_steps(steps, adsorbates, table.scheme)
    values = table.values(names, adsorbates)
    bad = ~np.isfinite(values)
    if bad.any():
        missing = {names[r]: [adsorbates[j] for j in np.flatnonzero(bad[r])] for r in np.flatnonzero(bad.any(axis=1))}
        if on_missing == "raise":
            raise MissingSpeciesError("kinetic model", missing)
        if on_missing != "drop":
            raise KineticsInputError(f"on_missing must be 'raise' or 'drop', got {on_missing!r}")
        warnings.warn(f"kinetic model: surfaces lacking adsorbates are left out: {missing}", MissingDataWarning, stacklevel=2)
        keep = ~bad.any(axis=1)
        names = [s for s, k in zip(names, keep) if k]
        values = values[keep]
        if not names:
            raise KineticsInputError("no surface has every adsorbate the model needs")
    a, n = compiled.affine(values, cond.pH, cond.scale, cond.temperature)
    n = np.asarray(n, dtype=float)
    S = len(names)

    # barriers: estimates first, then user rows
    T = cond.temperature
    ln_tst = math.log(tst_prefactor(T))
    offset = np.zeros((S, n_steps))
    slope = np.zeros((S, n_steps))
    lnA = np.full((S, n_steps), ln_tst)
    for i, (s, kind) in enumerate(zip(steps, kinds)):
        if kind == "electrochemical":
            offset[:, i], slope[:, i] = settings.intrinsic_barrier, settings.symmetry_factor
        elif kind == "surface":
            offset[:, i], slope[:, i] = settings.bep_intercept, settings.bep_slope
        elif kind == "adsorption":
            gas = [sp for sp, c in s.net().items() if sp.is_molecule and sp.key != _WATER][0]
            lnA[:, i] = math.log(collision_prefactor(_molar_mass(gas), T, settings.site_density, settings.sticking))
    user = np.zeros((S, n_steps), dtype=bool)
    if barriers is not None:
        bar = Barriers.from_frame(barriers)
        eq_index = {e: i for i, e in enumerate(s.equation for s in steps)}
        surf_index = {s: i for i, s in enumerate(names)}
        for row_no, row in enumerate(bar.frame.itertuples(index=False)):
            where = f"{bar.source}, line {row_no + 2}"
            i = _resolve_step(row.step, eq_index, steps, where)
            if row.surface == "*":
                rows = np.arange(S)
            elif row.surface in surf_index:
                rows = np.array([surf_index[row.surface]])
            else:
                raise KineticsInputError(f"{where}: unknown surface {row.surface!r}; surfaces of the model: {names}")
            beta = settings.symmetry_factor if not np.isfinite(row.symmetry_factor) else float(row.symmetry_factor)
            if kinds[i] == "electrochemical":
                dG_ref = kernel.step_free_energy(a[rows, i : i + 1], n[i : i + 1], float(row.potential))[:, 0]
                offset[rows, i] = float(row.G_a) - beta * dG_ref
                slope[rows, i] = beta
            else:
                offset[rows, i] = float(row.G_a)
                slope[rows, i] = 0.0
            if np.isfinite(row.prefactor):
                lnA[rows, i] = math.log(float(row.prefactor))
            user[rows, i] = True

    # products and their electron counts
    infos, products, z = _pathway_infos(overall, steps, compiled, values, full_act, cond, table)
    prod_stoich = np.zeros((n_steps, len(products)))
    for i, s in enumerate(steps):
        for sp, c in s.net().items():
            if sp.key in products:
                prod_stoich[i, products.index(sp.key)] += c
    eps = _interactions(interactions, adsorbates, species)
    if any(v == 0 for v in full_act.values()):
        notes.append("a molecule with activity 0 makes the steps that form it irreversible")
    return KineticModel(
        steps=tuple(steps), step_kinds=tuple(kinds), species=species, surfaces=tuple(names),
        reactant_orders=R, product_orders=P, ln_activity_forward=lnf, ln_activity_backward=lnb, electrons=n,
        affine_a=np.ascontiguousarray(a, dtype=float), raw_offset=offset, raw_slope=slope, ln_prefactor=lnA, user_barrier=user,
        product_stoichiometry=prod_stoich, pathways=tuple(infos), products=tuple(products), electrons_per_product=np.asarray(z, dtype=float),
        interactions=eps, conditions=cond, activities=dict(full_act), settings=settings, references=table.scheme.describe(),
        energy_source=table.source, notes=tuple(notes) + tuple(getattr(table, "notes", ()) or ()),
    )


def _resolve_step(text: str, eq_index: dict, steps: list[Step], where: str) -> int:
    t = str(text).strip()
    if t.isdigit():
        i = int(t) - 1
        if not 0 <= i < len(steps):
            raise KineticsInputError(f"{where}: step index {t} is outside 1..{len(steps)}")
        return i
    try:
        key = _step_key(Step.parse(t))
    except Exception as exc:
        raise KineticsInputError(f"{where}: cannot read step {t!r} ({exc})") from None
    for i, s in enumerate(steps):
        if _step_key(s) == key:
            return i
        if _step_key(s.reversed()) == key:
            raise KineticsInputError(
                f"{where}: step {t!r} is the reverse of model step {i + 1} ({s.equation!r}); give G_a for the step as written in the model"
            )
    raise KineticsInputError(f"{where}: step {t!r} is not in the model; steps: " + "; ".join(f"{i + 1}: {s.equation}" for i, s in enumerate(steps)))


def _pathway_infos(overall, steps, compiled, values, act, cond: Conditions, table: EnergyTable):
    infos, products, z = [], [], []
    for name, direction, net, electrons in overall:
        if "product" in net:  # from a network: the overall reaction of its first route to the product
            product, zz = net["product"], float(electrons)
            overall_step = net["overall"]
        else:
            made = [(sp, c) for sp, c in net.items() if sp.is_molecule and c > 0 and sp.key != _WATER]
            if not made:
                made = [(sp, c) for sp, c in net.items() if sp.is_molecule and c > 0]
            if not made:
                raise KineticsInputError(f"pathway {name!r} forms no molecule; a kinetic model needs a product")
            product, coef = made[0][0].key, made[0][1]
            zz = float(electrons) / float(coef)
            overall_step = net
        u_eq = u_eq_act = float("nan")
        if overall_step is not None:
            u_eq, u_eq_act = _equilibrium_potentials(overall_step, cond, table, act)
        infos.append(PathwayInfo(name, direction, product, zz, u_eq, u_eq_act))
        if product not in products:
            products.append(product)
            z.append(zz)
    return infos, products, z


def _equilibrium_potentials(net: dict, cond: Conditions, table: EnergyTable, act: dict) -> tuple[float, float]:
    reactants = tuple((sp, -c) for sp, c in net.items() if c < 0 and not sp.is_site and not sp.is_adsorbate)
    prods = tuple((sp, c) for sp, c in net.items() if c > 0 and not sp.is_site and not sp.is_adsorbate)
    step = Step(reactants, prods, text="overall")
    compiled = compile_steps((step,), (), table.scheme)
    a, n = compiled.affine(np.zeros((1, 0)), cond.pH, cond.scale, cond.temperature)
    u_eq = float(kernel.equilibrium_potential_from_affine(a, n)[0])
    kT = BOLTZMANN_EV * cond.temperature
    ln_q = sum(c * _ln(act.get(sp.key, 1.0)) for sp, c in net.items() if sp.is_molecule)
    a_act = a + kT * ln_q
    u_act = float(kernel.equilibrium_potential_from_affine(a_act, n)[0]) if np.isfinite(ln_q) else float("nan")
    return u_eq, u_act


def _interactions(interactions, adsorbates: list[str], species: tuple[str, ...]):
    if interactions is None:
        return None
    eps = np.zeros((len(species), len(species)))
    idx = {k: j for j, k in enumerate(adsorbates)}
    if isinstance(interactions, pd.DataFrame):
        items = {(str(r), str(c)): interactions.loc[r, c] for r in interactions.index for c in interactions.columns}
    elif isinstance(interactions, Mapping):
        items = dict(interactions)
    else:
        raise KineticsInputError("interactions must be a square DataFrame of adsorbates or a dict {(X*, Y*): eV}")
    for (j, k), v in items.items():
        for name in (j, k):
            if name not in idx:
                raise KineticsInputError(f"interaction names {name!r}, which is not an adsorbate of the model; adsorbates: {adsorbates}")
        try:
            value = float(v)
        except (TypeError, ValueError):
            raise KineticsInputError(f"interaction ({j}, {k}) must be a number of eV, got {v!r}") from None
        if not math.isfinite(value):
            raise KineticsInputError(f"interaction ({j}, {k}) must be finite")
        eps[idx[j], idx[k]] = value
    return eps if np.any(eps) else None
