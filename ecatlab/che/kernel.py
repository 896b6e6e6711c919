r"""The CHE kernel: the only place where free energies become potentials.

Every other module of ecatlab (engine tables, explorer, networks, volcanoes, uncertainty,
kinetics, Pourbaix, plotting) calls these functions; none re-derives them. All functions are pure
numpy and broadcast over any leading axes (surfaces, samples, grid points); the last axis is the
step axis.

The affine form
---------------
On a chosen potential scale (RHE or SHE, at a fixed pH and T) the free energy of step *i* is

.. math::

    \Delta G_i(U) = a_i + n_i\,e\,U

with :math:`a_i` in eV (the step free energy at U = 0 V on that scale, pH and temperature terms
included; see :meth:`ecatlab.che.CompiledPathway.affine`) and :math:`n_i` the electrons *consumed*
by the step (positive for a reduction step, negative for an oxidation step, zero for a chemical
step). Potentials are in V, so :math:`n_i e U` is :math:`n_i U` in eV.

Primitives
----------
* :func:`step_free_energy` -- :math:`a_i + n_i U` (eV).
* :func:`onset_potentials` -- :math:`U_i = -a_i / n_i` (V), the potential at which an
  electrochemical step turns downhill; NaN for chemical steps.
* :func:`envelope_of_lines` -- min (reduction) or max (oxidation) of per-step potentials; the one
  envelope implementation, used by :func:`envelope` and the volcanoes.
* :func:`potential_equivalents` -- each step's free energy at U_eq as a potential
  (:math:`U_\mathrm{eq} \mp \Delta G_i(U_\mathrm{eq})/e`), for volcanoes that include chemical steps.
* :func:`envelope` -- the limiting potential :math:`U_L = \min_i U_i` (reduction) or
  :math:`\max_i U_i` (oxidation) over electrochemical steps, and the potential-determining step.
* :func:`equilibrium_potential_from_affine` -- :math:`U_\mathrm{eq} = -\sum_i a_i / \sum_i n_i`.
* :func:`signed_overpotential` -- :math:`\eta = U_\mathrm{eq} - U_L` (reduction) or
  :math:`U_L - U_\mathrm{eq}` (oxidation), V; positive is a loss.
* :func:`chemical_obstacle` -- the largest free energy of a chemical (potential-independent) step
  and which step it is; a positive value blocks the pathway at every potential.
* :func:`gmax` -- the largest step free energy at the equilibrium potential over *all* steps,
  electrochemical and chemical alike,

  .. math:: G_\mathrm{max} = \max_i \Delta G_i(U_\mathrm{eq}) \quad [\mathrm{eV}],

  the :math:`G_\mathrm{max}(\eta)` descriptor evaluated at zero overpotential (Exner, ACS Catal. 10,
  12607 (2020)). For a pathway of one-electron electrochemical steps it equals :math:`e\eta`; a
  chemical step that is uphill by :math:`\Delta G_c` makes it at least :math:`\Delta G_c`. It is the
  default ranking key of ecatlab (lower is better).
* :func:`stacked_measures` -- :func:`envelope`, :func:`gmax` and :func:`chemical_obstacle` of many
  pathways at once, their steps stacked on the *first* axis (one contiguous row per step), for
  sample-by-surface blocks of the uncertainty propagation; the same numbers as the three
  functions above.
* :func:`ranking_order_rows` -- :func:`ranking_order` along the last axis of many rows (samples)
  at once, by one integer sort of packed keys; the same positions.
* :func:`ranking_order` -- the one ordering rule: surfaces blocked by an uphill chemical step come
  after every unblocked surface; within each group, lower :math:`G_\mathrm{max}` first.
"""

from __future__ import annotations

import numpy as np

from ecatlab.errors import OptionError, PathwayError

__all__ = [
    "ELECTROCHEMICAL_TOLERANCE",
    "electrochemical_mask",
    "step_free_energy",
    "onset_potentials",
    "envelope",
    "envelope_of_lines",
    "potential_equivalents",
    "equilibrium_potential_from_affine",
    "signed_overpotential",
    "chemical_obstacle",
    "gmax",
    "is_blocked",
    "BLOCKING_TOLERANCE_EV",
    "ranking_order",
    "effective_limiting_potential",
    "stacked_measures",
    "ranking_order_rows",
]

#: Steps with |n_i| at or below this many electrons are chemical (potential-independent).
ELECTROCHEMICAL_TOLERANCE = 1e-12


def electrochemical_mask(n) -> np.ndarray:
    """Boolean mask of the electrochemical steps (|n_i| > 1e-12 electrons)."""
    return np.abs(np.asarray(n, dtype=float)) > ELECTROCHEMICAL_TOLERANCE


def step_free_energy(a, n, potential) -> np.ndarray:
    """Step free energies at a potential: :math:`\\Delta G_i(U) = a_i + n_i U`.

    Parameters
    ----------
    a : array_like (..., n_steps)
        Step free energies at U = 0 V on the scale in question, eV.
    n : array_like (n_steps,) or (..., n_steps)
        Electrons consumed per step.
    potential : float or array_like
        U in V on the same scale; an array broadcasts against the leading axes of ``a``
        (give it shape (..., 1) or (...,); a 1-D array of one value per row is expanded).

    Returns
    -------
    ndarray (..., n_steps), eV.
    """
    a = np.asarray(a, dtype=float)
    u = np.asarray(potential, dtype=float)
    if u.ndim and u.shape[-1:] != (1,):
        u = u[..., None]
    return a + np.asarray(n, dtype=float) * u


def onset_potentials(a, n) -> np.ndarray:
    """Onset potential of every step, :math:`U_i = -a_i/n_i` in V; NaN for chemical steps."""
    a = np.asarray(a, dtype=float)
    n = np.asarray(n, dtype=float)
    ec = electrochemical_mask(n)
    safe = np.where(ec, n, 1.0)
    return np.where(ec, -a / safe, np.nan)


def _extreme(part: np.ndarray, direction: str) -> tuple[np.ndarray, np.ndarray]:
    """min (reduction) or max (oxidation) over the last axis and its position.

    numpy's min/max propagate NaN, so a row with a NaN gives NaN (its position is then that of a
    NaN and means nothing); no masked copies are made."""
    if direction == "reduction":
        return part.min(axis=-1), part.argmin(axis=-1)
    if direction == "oxidation":
        return part.max(axis=-1), part.argmax(axis=-1)
    raise OptionError(f"direction must be 'reduction' or 'oxidation', got {direction!r}")


def envelope_of_lines(lines, direction: str, mask=None) -> tuple[np.ndarray, np.ndarray]:
    """Lower (reduction) or upper (oxidation) envelope of per-step potentials over the last axis.

    Parameters
    ----------
    lines : array_like (..., n_steps)
        A potential per step, V (onsets, or :func:`potential_equivalents`).
    direction : {"reduction", "oxidation"}
    mask : array_like of bool (n_steps,), optional
        Steps that take part (default all).

    Returns
    -------
    (value, index)
        ``min`` (reduction) or ``max`` (oxidation) over the masked steps, V, and the index of the
        step attaining it among all steps. A NaN among the masked steps gives NaN.
    """
    lines = np.asarray(lines, dtype=float)
    if mask is None or np.all(mask):
        idx_all = np.arange(lines.shape[-1])
        part = lines
    else:
        idx_all = np.flatnonzero(np.asarray(mask, dtype=bool))
        part = lines[..., idx_all]
    if idx_all.size == 0:
        raise PathwayError("no step takes part in the envelope")
    value, local = _extreme(part, direction)
    return value, idx_all[local]


def potential_equivalents(a, n, equilibrium_potential, direction: str) -> np.ndarray:
    """Each step's free energy at U_eq expressed as a potential, V.

    ``U_eq - dG_i(U_eq)/e`` for a reduction, ``U_eq + dG_i(U_eq)/e`` for an oxidation, for every
    step, chemical ones included. Their envelope (:func:`envelope_of_lines`) is
    :func:`effective_limiting_potential` of :func:`gmax`; for a one-electron step the value equals
    its onset potential, for a chemical step it places its potential-independent obstacle on the
    potential axis. Used for volcanoes that include chemical steps.
    """
    dG = step_free_energy(a, n, equilibrium_potential)
    u_eq = np.asarray(equilibrium_potential, dtype=float)
    if u_eq.ndim:
        u_eq = u_eq[..., None]
    if direction == "reduction":
        return u_eq - dG
    if direction == "oxidation":
        return u_eq + dG
    raise OptionError(f"direction must be 'reduction' or 'oxidation', got {direction!r}")


def envelope(a, n, direction: str) -> tuple[np.ndarray, np.ndarray]:
    """Limiting potential and potential-determining step.

    Parameters
    ----------
    a : array_like (..., n_steps)
        Step free energies at U = 0 V, eV.
    n : array_like (n_steps,)
        Electrons consumed per step (one set for all rows).
    direction : {"reduction", "oxidation"}

    Returns
    -------
    (U_L, index)
        ``U_L`` in V (shape ``a.shape[:-1]``): :math:`\\min_i(-a_i/n_i)` for reduction,
        :math:`\\max_i(-a_i/n_i)` for oxidation, over electrochemical steps only; ``index`` is the
        position of the determining step among *all* steps (int). Rows whose ``a`` is NaN give NaN.
    """
    a = np.asarray(a, dtype=float)
    n = np.asarray(n, dtype=float)
    if n.ndim != 1:
        raise OptionError("envelope takes one electron vector n (n_steps,) for all rows")
    ec = np.flatnonzero(electrochemical_mask(n))
    if ec.size == 0:
        raise PathwayError("a pathway without electrochemical steps has no limiting potential")
    onset = a[..., ec] / (-n[ec])  # onsets of the electrochemical steps only
    value, local = _extreme(onset, direction)
    return value, ec[local]


def equilibrium_potential_from_affine(a, n) -> np.ndarray:
    """:math:`U_\\mathrm{eq} = -\\sum_i a_i / \\sum_i n_i` in V (the overall reaction's potential)."""
    a = np.asarray(a, dtype=float)
    total_n = float(np.sum(n))
    if abs(total_n) <= ELECTROCHEMICAL_TOLERANCE:
        raise PathwayError("the overall reaction transfers no electrons; it has no equilibrium potential")
    return -a.sum(axis=-1) / total_n


def signed_overpotential(limiting_potential, equilibrium_potential, direction: str) -> np.ndarray:
    """Theoretical overpotential in V, positive for a loss.

    :math:`\\eta = U_\\mathrm{eq} - U_L` for a reduction, :math:`U_L - U_\\mathrm{eq}` for an oxidation.
    It can be negative when an uphill chemical step, not an electrochemical one, is the obstacle.
    """
    u_l = np.asarray(limiting_potential, dtype=float)
    u_eq = np.asarray(equilibrium_potential, dtype=float)
    if direction == "reduction":
        return u_eq - u_l
    if direction == "oxidation":
        return u_l - u_eq
    raise OptionError(f"direction must be 'reduction' or 'oxidation', got {direction!r}")


def chemical_obstacle(a, n) -> tuple[np.ndarray, np.ndarray]:
    """Largest free energy of a chemical step and its index.

    Returns
    -------
    (max_dG, index)
        ``max_dG`` in eV (NaN where the pathway has no chemical step), ``index`` into all steps
        (-1 where there is none). Chemical steps do not move with the potential: ``max_dG > 0``
        means the pathway is uphill at every potential.
    """
    a = np.asarray(a, dtype=float)
    chem = np.flatnonzero(~electrochemical_mask(n))
    shape = a.shape[:-1]
    if chem.size == 0:
        return np.full(shape, np.nan), np.full(shape, -1, dtype=np.int64)
    value, local = _extreme(a[..., chem], "oxidation")  # the largest value
    return value, chem[local]


def gmax(a, n, equilibrium_potential) -> tuple[np.ndarray, np.ndarray]:
    """:math:`G_\\mathrm{max}` at zero overpotential and the step that carries it.

    Parameters
    ----------
    a : array_like (..., n_steps)
        Step free energies at U = 0 V, eV.
    n : array_like (n_steps,)
        Electrons consumed per step.
    equilibrium_potential : float or array_like
        U_eq in V on the same scale (broadcast over the leading axes).

    Returns
    -------
    (G_max, index)
        ``G_max = max_i (a_i + n_i U_eq)`` in eV over all steps, and its step index.

    Notes
    -----
    Exner, ACS Catal. 10, 12607 (2020): the descriptor :math:`G_\\mathrm{max}(\\eta)` at
    :math:`\\eta = 0`. For one-electron steps only, :math:`G_\\mathrm{max} = e\\eta`.
    """
    dG = step_free_energy(a, n, equilibrium_potential)
    return _extreme(dG, "oxidation")  # the largest step free energy and its step


#: A chemical step uphill by more than this (eV) blocks a pathway at every potential. Default 0:
#: any uphill chemical step, since no potential can drive it; functions that rank take a
#: ``blocking_tolerance`` argument for users who accept small, thermally surmountable steps.
BLOCKING_TOLERANCE_EV = 0.0


def is_blocked(max_chemical_dG, tolerance: float = BLOCKING_TOLERANCE_EV) -> np.ndarray:
    """True where a chemical step is uphill by more than ``tolerance`` eV: blocked at every potential (NaN: False)."""
    m = np.asarray(max_chemical_dG, dtype=float)
    tol = float(tolerance)
    if not np.isfinite(tol) or tol < 0:
        raise OptionError(f"blocking tolerance must be a finite number of eV >= 0 (e.g. 0.1), got {tolerance!r}")
    return np.nan_to_num(m, nan=-np.inf) > tol


def ranking_order(g_max, blocked) -> np.ndarray:
    """Positions that sort surfaces best first: unblocked before blocked, then lower G_max.

    NaN (missing data) goes last. Ties keep their input order (stable).
    """
    g = np.asarray(g_max, dtype=float)
    b = np.asarray(blocked, dtype=bool)
    missing = np.isnan(g)
    return np.lexsort((np.where(missing, np.inf, g), b.astype(np.int8), missing.astype(np.int8)))


def effective_limiting_potential(g_max, equilibrium_potential, direction: str) -> np.ndarray:
    """The potential that G_max corresponds to: U_eq - G_max/e (reduction) or U_eq + G_max/e (oxidation), V.

    Equal to U_L for pathways of one-electron electrochemical steps without an uphill chemical
    step; used as the y-axis of volcanoes that include chemical steps.
    """
    g = np.asarray(g_max, dtype=float)
    u_eq = np.asarray(equilibrium_potential, dtype=float)
    if direction == "reduction":
        return u_eq - g
    if direction == "oxidation":
        return u_eq + g
    raise OptionError(f"direction must be 'reduction' or 'oxidation', got {direction!r}")


def _running_extreme(rows, start: int, stop: int, greater: bool, value: np.ndarray, index: np.ndarray,
                     mask: np.ndarray, scratch: np.ndarray, transform=None) -> None:
    """Extreme over ``rows[start:stop]`` (each row one step) and the offset of its first occurrence.

    ``value`` gets the max (``greater``) or min, NaN-propagating like ``np.max``/``np.min``;
    ``index`` (int8) the position relative to ``start`` of the first row attaining it (meaningless
    where the value is NaN, as with ``np.argmax``). ``transform(i, out)`` maps row ``i`` into
    ``out`` first when given. No temporaries beyond the buffers passed in."""
    pick = np.maximum if greater else np.minimum
    better = np.greater if greater else np.less
    if transform is None:
        np.copyto(value, rows[start])
    else:
        transform(start, value)
    index.fill(0)
    row = None
    for k, i in enumerate(range(start + 1, stop), start=1):
        if transform is None:
            row = rows[i]
        else:
            row = row if row is not None else np.empty_like(value)
            transform(i, row)
        better(row, value, out=mask)  # strictly better: the first occurrence wins ties
        pick(value, row, out=value)
        # the offset k grows along the loop, so "where(mask, k, index)" is max(index, mask * k)
        np.multiply(mask.view(np.int8), np.int8(k), out=scratch)
        np.maximum(index, scratch, out=index)


def _to_pathway_index(index: np.ndarray, positions: np.ndarray, contiguous: bool) -> None:
    """Turn offsets into ``positions`` (int8, in place) into the positions themselves."""
    if contiguous:
        if positions[0]:
            np.add(index, np.int8(positions[0]), out=index)
    else:
        np.copyto(index, positions.astype(np.int8)[index])


def stacked_measures(a, n, bounds, directions, equilibrium_potentials, out=None) -> list[dict]:
    """Limiting potential, G_max and chemical obstacle of many pathways whose steps are stacked.

    The batched form of :func:`envelope`, :func:`gmax` and :func:`chemical_obstacle` for
    sample-by-surface blocks: the steps of all pathways are the rows of one array (step axis
    *first*, so that each step is one contiguous row and every operation runs over whole rows).

    Parameters
    ----------
    a : ndarray (n_steps_total, ...)
        Step free energies at U = 0 V on the scale in question, eV; pathway ``j`` owns rows
        ``bounds[j]:bounds[j + 1]``.
    n : array_like (n_steps_total,)
        Electrons consumed per step.
    bounds : sequence of int (n_pathways + 1,)
        Row offsets of the pathways (first 0, last n_steps_total).
    directions : sequence of {"reduction", "oxidation"}
        One per pathway.
    equilibrium_potentials : sequence of float or ndarray
        U_eq of each pathway in V on the same scale, broadcast against ``a.shape[1:]``.
    out : list of dict, optional
        Per pathway, arrays of shape ``a.shape[1:]`` to write into, any of the keys below.

    Returns
    -------
    list of dict, one per pathway, with
        ``U_L`` (V) and ``step`` (int8, index of the potential-determining step within the
        pathway) as :func:`envelope`; ``G_max`` (eV) and ``G_max_step`` (int8) as :func:`gmax`;
        ``max_chemical_dG`` (eV) and ``chemical_step`` (int8) as :func:`chemical_obstacle`, or
        None for both when the pathway has no chemical step; ``G_max_is_overpotential`` (bool):
        True when G_max is, number for number, :func:`signed_overpotential` of U_L and U_eq (every
        step electrochemical with one electron, see Notes). Where the numbers are NaN the
        indices mean nothing.

    Notes
    -----
    The equations are those of :func:`envelope` (:math:`U_i = -a_i/n_i`, min for a reduction,
    max for an oxidation), :func:`gmax` (:math:`\\max_i a_i + n_i U_\\mathrm{eq}`) and
    :func:`chemical_obstacle`, with the same floating-point results: when every
    electrochemical step of a pathway moves one electron in the pathway's direction
    (:math:`n_i = +1` for a reduction, :math:`-1` for an oxidation), :math:`-a_i/n_i` is
    :math:`\\mp a_i` exactly, so the envelope is taken over the rows of ``a`` themselves, and
    the electrochemical part of :math:`G_\\mathrm{max}` is :math:`e\\eta` of
    :func:`signed_overpotential`: :math:`\\max_i (a_i \\pm U_\\mathrm{eq})` rounds like
    :math:`\\max_i a_i \\pm U_\\mathrm{eq}` because rounding is monotonic. The only
    possible difference is which of two electrochemical steps carries G_max when their
    :math:`a_i` differ but :math:`a_i + n_i U_\\mathrm{eq}` round to the same number (a tie
    within one rounding unit; the value is the same).
    """
    a = np.asarray(a, dtype=float)
    n = np.asarray(n, dtype=float)
    bounds = [int(b) for b in bounds]
    if n.ndim != 1 or n.shape[0] != a.shape[0] or bounds[0] != 0 or bounds[-1] != a.shape[0] or np.any(np.diff(bounds) < 1):
        raise OptionError("stacked_measures: n must have one value per row of a, bounds must run from 0 to the "
                          "number of rows in increasing steps")
    if len(directions) != len(bounds) - 1 or len(equilibrium_potentials) != len(bounds) - 1:
        raise OptionError("stacked_measures: give one direction and one equilibrium potential per pathway")
    if max(np.diff(bounds)) > 127:
        raise OptionError("stacked_measures: at most 127 steps per pathway (int8 step indices)")
    shape = a.shape[1:]
    mask = np.empty(shape, dtype=bool)
    scratch = np.empty(shape, dtype=np.int8)
    ec_all = electrochemical_mask(n)
    results = []
    for j, direction in enumerate(directions):
        if direction not in ("reduction", "oxidation"):
            raise OptionError(f"direction must be 'reduction' or 'oxidation', got {direction!r}")
        lo, hi = bounds[j], bounds[j + 1]
        dest = dict(out[j]) if out is not None else {}
        res = {k: dest.get(k) for k in ("U_L", "step", "G_max", "G_max_step", "max_chemical_dG", "chemical_step")}
        for k in ("U_L", "G_max"):
            if res[k] is None:
                res[k] = np.empty(shape)
        for k in ("step", "G_max_step"):
            if res[k] is None:
                res[k] = np.empty(shape, dtype=np.int8)
        ec = np.flatnonzero(ec_all[lo:hi]) + lo
        chem = np.flatnonzero(~ec_all[lo:hi]) + lo
        if ec.size == 0:
            raise PathwayError("a pathway without electrochemical steps has no limiting potential")
        u_eq = equilibrium_potentials[j]
        sign = 1.0 if direction == "reduction" else -1.0
        unit = bool(np.all(n[ec] == sign))
        contiguous = ec.size == ec[-1] - ec[0] + 1
        u_l, step = res["U_L"], res["step"]
        if unit and contiguous:
            # -a_i/n_i is -a_i (reduction: U_L = min(-a) = -max(a)) or a_i (oxidation: U_L = max(a))
            _running_extreme(a, ec[0], ec[-1] + 1, True, u_l, step, mask, scratch)
            if direction == "reduction":
                np.negative(u_l, out=u_l)
        else:
            rows = ec
            onset = lambda i, o: np.divide(a[rows[i]], -n[rows[i]], out=o)  # noqa: E731 - as in envelope
            _running_extreme(None, 0, rows.size, direction == "oxidation", u_l, step, mask, scratch, transform=onset)
        _to_pathway_index(step, ec - lo, contiguous)
        g, g_step = res["G_max"], res["G_max_step"]
        if unit:
            # max over the electrochemical steps = signed_overpotential(u_l, u_eq, direction), written in place
            if direction == "reduction":
                np.subtract(u_eq, u_l, out=g)
            else:
                np.subtract(u_l, u_eq, out=g)
            np.copyto(g_step, step)
        else:
            line = lambda i, o: np.add(a[ec[i]], n[ec[i]] * np.asarray(u_eq), out=o)  # noqa: E731 - as in gmax
            _running_extreme(None, 0, ec.size, True, g, g_step, mask, scratch, transform=line)
            _to_pathway_index(g_step, ec - lo, contiguous)
        if chem.size:
            c_val = res["max_chemical_dG"] if res["max_chemical_dG"] is not None else np.empty(shape)
            c_step = res["chemical_step"] if res["chemical_step"] is not None else np.empty(shape, dtype=np.int8)
            rows_c = chem
            take = lambda i, o: np.copyto(o, a[rows_c[i]])  # noqa: E731
            _running_extreme(None, 0, chem.size, True, c_val, c_step, mask, scratch, transform=take)
            _to_pathway_index(c_step, chem - lo, chem.size == chem[-1] - chem[0] + 1)
            # G_max over all steps: the chemical maximum wins when larger, the lower index on a tie
            np.greater(c_val, g, out=mask)
            mask |= (c_val == g) & (c_step < g_step)
            np.copyto(g_step, np.where(mask, c_step, g_step))
            np.maximum(g, c_val, out=g)
            res["max_chemical_dG"], res["chemical_step"] = c_val, c_step
        res["G_max_is_overpotential"] = bool(unit and not chem.size)
        results.append(res)
    return results


def _ordered_bits(x: np.ndarray) -> np.ndarray:
    """uint64 keys (a new array) with the order of the float64 values (no NaN; -0.0 counts as +0.0):
    the sign bit set for positive values, all bits flipped for negative ones."""
    u = np.add(x, 0.0, dtype=float).view(np.uint64)  # + 0.0 turns -0.0 into +0.0
    flip = (u.view(np.int64) >> np.int64(63)).view(np.uint64)  # all ones for negative values, else 0
    flip |= np.uint64(1 << 63)
    u ^= flip
    return u


#: Keys per block of rows in :func:`ranking_order_rows` (64 k keys: 512 kB per key array).
_RANK_BLOCK_KEYS = 1 << 16


def ranking_order_rows(g_max, blocked) -> np.ndarray:
    """:func:`ranking_order` along the last axis, for arrays of many rows (e.g. samples x surfaces).

    Parameters
    ----------
    g_max : array_like (..., n_surfaces)
        G_max in eV (NaN: missing data, ranked last).
    blocked : array_like of bool, same shape

    Returns
    -------
    ndarray of int (..., n_surfaces)
        Per row the surface positions best first: exactly ``ranking_order(g_max, blocked)``.

    Notes
    -----
    Each (missing, blocked, G_max, position) tuple is packed into one unsigned 64-bit key -- two
    bits for the groups, the order-preserving bit pattern of G_max cut to the bits left over, the
    position in the lowest bits -- and every row is sorted once (an integer sort, much faster than
    a three-key lexicographic sort). Cutting the low bits of G_max can only merge values that lie
    within about 1e-12 relative of each other; rows where two such values meet are re-ranked with
    :func:`ranking_order`, so the result is the same in every case.
    """
    g = np.asarray(g_max, dtype=float)
    b = np.broadcast_to(np.asarray(blocked, dtype=bool), g.shape)
    if g.ndim == 0:
        raise OptionError("ranking_order_rows needs at least one axis of surfaces")
    S = g.shape[-1]
    if S == 0:
        return np.zeros(g.shape, dtype=np.intp)
    R = g.size // S
    block = max(1, _RANK_BLOCK_KEYS // S)
    if R > block:  # rows are independent: a block of rows at a time keeps the key arrays in cache
        flat_g, flat_b = g.reshape(R, S), b.reshape(R, S)
        out = np.empty((R, S), dtype=np.int64)
        for lo in range(0, R, block):
            out[lo:lo + block] = ranking_order_rows(flat_g[lo:lo + block], flat_b[lo:lo + block])
        return out.reshape(g.shape)
    missing = np.isnan(g)
    any_missing = bool(missing.any())
    index_bits = max(1, int(S - 1).bit_length())
    if index_bits > 40:  # pragma: no cover - more than 1e12 surfaces per row
        return ranking_order(g, b)
    value_bits = 62 - index_bits
    u = _ordered_bits(np.where(missing, np.inf, g) if any_missing else g)
    key = u >> np.uint64(64 - value_bits)
    key <<= np.uint64(index_bits)
    key |= np.arange(S, dtype=np.uint64)
    # the same group order as ranking_order: missing last, then blocked after unblocked
    if b.any():
        key |= b.view(np.uint8).astype(np.uint64) << np.uint64(62)
    if any_missing:
        key |= missing.view(np.uint8).astype(np.uint64) << np.uint64(63)
    key.sort(axis=-1)
    # equal packed values of different G_max (a cut tie): re-rank those rows exactly
    packed = key >> np.uint64(index_bits)
    near = packed[..., 1:] == packed[..., :-1]
    del packed
    key &= np.uint64((1 << index_bits) - 1)
    order = key.view(np.int64)
    if near.any():
        rows = np.flatnonzero(near.reshape(-1, S - 1).any(axis=-1))
        flat_order = order.reshape(-1, S)
        flat_u = u.reshape(-1, S)
        for r in rows:  # only rows with a tie in the packed keys (rare unless values repeat exactly)
            uo = flat_u[r, flat_order[r]]
            tie = near.reshape(-1, S - 1)[r]
            if np.any(uo[1:][tie] != uo[:-1][tie]):
                flat_order[r] = ranking_order(g.reshape(-1, S)[r], b.reshape(-1, S)[r])
    return order
