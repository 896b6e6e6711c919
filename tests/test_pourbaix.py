"""Tests of ecatlab.pourbaix: surface states, their formation free energies on the CHE kernel, the
most stable state over (U, pH), transition potentials and the flag on limiting-potential tables.

Outside references:
* Hansen, Rossmeisl & Nørskov, Phys. Chem. Chem. Phys. 10, 3722 (2008): a proton-coupled transition
  clean -> OH* with formation free energy dG (eV) at U = 0, pH 0 lies at U = dG/e on the SHE scale at
  pH 0, shifts by -k_B T ln(10)/e per pH on the SHE scale and does not move with pH on the RHE scale.
* k_B and e from scipy.constants (CODATA), computed independently here.
* O2/H2O standard potential 1.229 V (CRC Handbook, electrochemical series) for the water line.
* Brute-force evaluation of the formation free energies on a grid with plain Python loops, written
  here from the CHE (G(H+ + e-) = 1/2 G(H2) - e U_RHE; Nørskov et al., J. Phys. Chem. B 108, 17886 (2004)).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import constants

from ecatlab.errors import SurfaceStateError
from ecatlab.pourbaix import (
    CLEAN,
    flag_surface_states,
    formation_free_energies,
    pourbaix_map,
    read_surface_states,
    stable_states,
    surface_states_from_energies,
    transition_potential,
    water_stability_lines,
)


def kT_ln10(T):
    return constants.k * T / constants.e * math.log(10)  # V per pH, from scipy.constants


def two_state(g_oh=0.8):
    return read_surface_states(pd.DataFrame({"surface": ["M"], "state": ["OH*"], "adsorbates": ["OH*"], "sites": [1], "G": [g_oh]}))


# ------------------------------------------------------------------------------------------------
# the two-state boundary (Hansen et al. 2008)
# ------------------------------------------------------------------------------------------------
@pytest.mark.parametrize("T", [298.15, 350.0])
def test_two_state_boundary_she_and_rhe(T):
    states = two_state(0.8)
    ph = np.array([0.0, 3.0, 7.0, 13.0])
    u_she = transition_potential(states, "M", CLEAN, "OH*", pH=ph, scale="SHE", temperature=T)
    u_rhe = transition_potential(states, "M", CLEAN, "OH*", pH=ph, scale="RHE", temperature=T)
    assert u_she[0] == pytest.approx(0.8, abs=1e-12)  # dG/e at pH 0
    np.testing.assert_allclose(np.diff(u_she) / np.diff(ph), -kT_ln10(T), rtol=1e-12)  # SHE slope
    np.testing.assert_allclose(u_rhe, 0.8, atol=1e-12)  # RHE: flat


def test_two_state_boundary_on_the_grid():
    """The map switches from clean to OH* within one grid step of dG/e - k_B T ln10 pH / e (SHE)."""
    states = two_state(0.8)
    u = np.linspace(-0.5, 2.0, 1001)
    ph = np.array([0.0, 5.0, 10.0, 14.0])
    m = pourbaix_map(states, "M", potential=u, pH=ph, scale="SHE")
    step = u[1] - u[0]
    for i, p in enumerate(ph):
        oh = m.region("OH*")[i]
        first = u[np.argmax(oh)]
        assert not oh[u < 0.8 - kT_ln10(298.15) * p - step].any()
        assert abs(first - (0.8 - kT_ln10(298.15) * p)) <= step
    m_rhe = pourbaix_map(states, "M", potential=u, pH=ph, scale="RHE")
    assert all(np.array_equal(m_rhe.stable[0], m_rhe.stable[i]) for i in range(len(ph)))


def test_oxygen_and_hydrogen_transitions():
    """O* forms by 2 (H+ + e-) released: boundary at dG/2e; H* by one consumed: boundary at -dG/e."""
    df = pd.DataFrame({"surface": ["M", "M"], "state": ["O*", "H*"], "adsorbates": ["O*", "H*"], "sites": [1, 1], "G": [1.6, -0.2]})
    states = read_surface_states(df)
    assert states.frame.set_index("state").loc["O*", "electrons"] == -2
    assert states.frame.set_index("state").loc["H*", "electrons"] == 1
    assert transition_potential(states, "M", CLEAN, "O*") == pytest.approx(0.8, abs=1e-12)
    assert transition_potential(states, "M", CLEAN, "H*") == pytest.approx(0.2, abs=1e-12)
    at = [stable_states(states, u).iloc[0]["stable_state"] for u in (0.1, 0.5, 1.0)]
    assert at == ["H*", CLEAN, "O*"]


def test_carbon_state_from_co2_reference():
    """CO* from the CO2(g) reference: * + CO2(g) + 2 H+ + 2 e- -> CO* + H2O(l), two electrons consumed."""
    states = read_surface_states(pd.DataFrame({"surface": ["M"], "state": ["CO*"], "adsorbates": ["CO*"], "sites": [1], "G": [0.4]}))
    row = states.frame.set_index("state").loc["CO*"]
    assert row["electrons"] == 2 and "CO2(g)" in row["formation_step"] and "H2O(l)" in row["formation_step"]
    assert transition_potential(states, "M", CLEAN, "CO*") == pytest.approx(-0.2, abs=1e-12)


def test_water_lines():
    w = water_stability_lines([0.0, 14.0], "SHE")
    assert w["H2_evolution"].iloc[0] == pytest.approx(0.0, abs=1e-12)
    assert w["O2_evolution"].iloc[0] == pytest.approx(1.229, abs=1e-3)  # CRC electrochemical series
    assert (w["O2_evolution"].iloc[1] - w["O2_evolution"].iloc[0]) / 14 == pytest.approx(-kT_ln10(298.15), rel=1e-9)
    r = water_stability_lines([0.0, 14.0], "RHE")
    np.testing.assert_allclose(r["H2_evolution"], 0.0, atol=1e-12)


# ------------------------------------------------------------------------------------------------
# coverages and brute force
# ------------------------------------------------------------------------------------------------
def coverage_table():
    rows = [
        ("M", "OH* 1/4 ML", "OH*", 0.30), ("M", "OH* 1/2 ML", "2 OH*", 0.75), ("M", "OH* 1 ML", "4 OH*", 2.2),
        ("M", "O* 1/4 ML", "O*", 1.10), ("M", "O* 1/2 ML", "2 O*", 2.5), ("M", "O*+OH*", "O* + OH*", 1.5),
        ("M", "H* 1/4 ML", "H*", -0.05), ("M", "H* 1 ML", "4 H*", 0.2),
    ]
    return pd.DataFrame(rows, columns=["surface", "state", "adsorbates", "G"]).assign(sites=4)


def brute_force(frame, u_list, ph_list, scale, T):
    """Formation free energy with plain loops: releases m = 2 n_O - n_H (H+ + e-) pairs from water."""
    from pymatgen.core import Composition

    out = {}
    for r in frame.itertuples():
        n_o = n_h = 0.0
        for term in r.adsorbates.split("+"):
            term = term.strip()
            c, sp = (term.split() if " " in term else ("1", term))
            comp = Composition(sp.rstrip("*"))
            n_o += float(c) * comp["O"]
            n_h += float(c) * comp["H"]
        m = 2 * n_o - n_h
        for i, p in enumerate(ph_list):
            for j, u in enumerate(u_list):
                u_rhe = u + kT_ln10(T) * p if scale == "SHE" else u
                out[(r.state, i, j)] = r.G - m * u_rhe
    return out


@pytest.mark.parametrize("scale", ["SHE", "RHE"])
def test_stability_regions_vs_brute_force(scale):
    df = coverage_table()
    states = read_surface_states(df)
    u = np.linspace(-0.6, 1.6, 47)
    ph = np.linspace(0, 14, 8)
    m = pourbaix_map(states, "M", potential=u, pH=ph, scale=scale, temperature=310.0)
    bf = brute_force(df, u, ph, scale, 310.0)
    labels = [CLEAN] + list(df["state"])
    for i in range(len(ph)):
        for j in range(len(u)):
            energies = [0.0] + [bf[(s, i, j)] for s in df["state"]]
            assert m.formation_dG[i, j] == pytest.approx(energies, abs=1e-10)
            # the map's state has the lowest energy (exact ties, which a grid point can hit, count as equal)
            assert energies[int(m.stable[i, j])] == pytest.approx(min(energies), abs=1e-12)
    assert len(m.present_states()) >= 3


def test_coverage_is_adsorbates_per_site():
    states = read_surface_states(coverage_table())
    cov = states.coverage().loc["M"]
    assert cov["OH* 1/4 ML"] == 0.25 and cov["OH* 1/2 ML"] == 0.5 and cov["OH* 1 ML"] == 1.0 and cov[CLEAN] == 0.0
    s = stable_states(states, 1.2).iloc[0]
    assert s["coverage"] == cov[s["stable_state"]]
    assert s["clean_margin"] >= 0


@settings(max_examples=30, deadline=None)
@given(
    st.lists(st.floats(-1.0, 3.0), min_size=3, max_size=3),
    st.floats(-1.0, 2.0),
    st.floats(0.0, 14.0),
    st.sampled_from(["RHE", "SHE"]),
)
def test_stable_state_is_the_minimum(gs, u, ph, scale):
    df = pd.DataFrame({"surface": "M", "state": ["H*", "OH*", "O*"], "adsorbates": ["H*", "OH*", "O*"], "sites": 1, "G": gs})
    states = read_surface_states(df)
    dG = formation_free_energies(states, u, ph, scale)[0, 0, 0]
    s = stable_states(states, u, ph, scale).iloc[0]
    assert s["formation_dG"] == pytest.approx(dG.min(), abs=1e-12)
    assert s["formation_dG"] <= 0.0 + 1e-12  # the clean surface (0) is always a candidate
    # the same point on the other scale gives the same state
    other = "SHE" if scale == "RHE" else "RHE"
    shift = kT_ln10(298.15) * ph
    u_other = u - shift if scale == "RHE" else u + shift
    s2 = stable_states(states, u_other, ph, other).iloc[0]
    assert s2["formation_dG"] == pytest.approx(s["formation_dG"], abs=1e-9)


# ------------------------------------------------------------------------------------------------
# the flag on a limiting-potential table
# ------------------------------------------------------------------------------------------------
def test_flag_when_clean_surface_is_not_stable_at_its_own_limiting_potential():
    from ecatlab.che.engine import limiting_potentials
    from ecatlab.energies import EnergyTable

    # ORR limiting potentials: A 0.815 V (first step), B 0.50 V (OH* removal), from the energy table
    g = pd.DataFrame({"OH*": [0.9, 0.5], "O*": [2.2, 1.5], "OOH*": [4.1, 4.17]}, index=["A", "B"])
    table = EnergyTable.from_matrix(g)
    lp = limiting_potentials(table, "orr-4e")
    u = lp.set_index("surface")["limiting_potential"]
    # surface states computed in a larger cell: on B, 1/4 ML OH* binds more strongly (0.30 eV per cell)
    states = read_surface_states(pd.DataFrame({
        "surface": ["A", "A", "B", "B"], "state": ["OH* 1/4 ML", "O* 1/4 ML"] * 2, "adsorbates": ["OH*", "O*"] * 2,
        "sites": 4, "G": [0.9, 2.2, 0.3, 1.5]}))
    flagged = flag_surface_states(lp, states).set_index("surface")
    assert flagged.loc["A", "assumed_state_stable"] and flagged.loc["A", "surface_state_flag"] == ""
    assert flagged.loc["A", "surface_state_at_U_L"] == CLEAN
    assert not flagged.loc["B", "assumed_state_stable"]
    assert flagged.loc["B", "surface_state_at_U_L"] == "OH* 1/4 ML" and flagged.loc["B", "surface_state_coverage"] == 0.25
    # margin: G_clean - G_OH*(U) = 0 - (0.30 - U) = U - 0.30 eV per cell (brute force, RHE)
    assert flagged.loc["B", "assumed_state_margin"] == pytest.approx(u["B"] - 0.30, abs=1e-12)
    assert "assumes clean" in flagged.loc["B", "surface_state_flag"]
    assert "surface_state_flag" in flagged.attrs["columns"]
    # a tolerance larger than the margin accepts the clean surface
    tol = flag_surface_states(lp, states, tolerance=1.0).set_index("surface")
    assert tol.loc["B", "assumed_state_stable"]


def test_oer_and_her_flags_follow_from_the_step_inequalities():
    """Same cell for pathway and states: 4e ORR has U_L <= dG(OH*) and <= dG(O*) - dG(OH*), so clean is
    stable at its U_L; OER has U_L >= dG(O*) - dG(OH*) and >= dG(OH*), so U_L >= dG(O*)/2 and O* is at
    least as stable as clean; HER (Volmer-Heyrovsky) with dG(H*) < 0 has U_L = dG(H*) < -dG(H*): H*-covered."""
    from ecatlab.che.engine import limiting_potentials
    from ecatlab.demo import demo_energies

    table = demo_energies()
    states = surface_states_from_energies(table)
    lp = flag_surface_states(limiting_potentials(table, ["orr-4e", "oer-4e", "her-volmer-heyrovsky"]), states)
    orr, oer, her = (lp[lp["pathway"] == k] for k in ("orr-4e", "oer-4e", "her-volmer-heyrovsky"))
    assert not orr["surface_state_at_U_L"].isin(["OH*", "O*"]).any()
    assert (oer["surface_state_at_U_L"] == "O*").all() and not oer["assumed_state_stable"].any()
    g_h = table.matrix["H*"].reindex(her["surface"].astype(str)).to_numpy()
    assert np.array_equal(her["surface_state_at_U_L"].to_numpy() == "H*", g_h < 0)


def test_flag_on_she_table_uses_its_pH():
    from ecatlab.che.engine import limiting_potentials
    from ecatlab.energies import EnergyTable

    table = EnergyTable.from_matrix(pd.DataFrame({"OH*": [0.5], "O*": [1.5], "OOH*": [4.17]}, index=["B"]))
    states = surface_states_from_energies(table, ["OH*", "O*"])
    rhe = flag_surface_states(limiting_potentials(table, "orr-4e", pH=13, scale="RHE"), states)
    she = flag_surface_states(limiting_potentials(table, "orr-4e", pH=13, scale="SHE"), states)
    assert rhe["surface_state_at_U_L"].iloc[0] == she["surface_state_at_U_L"].iloc[0]
    assert rhe["assumed_state_margin"].iloc[0] == pytest.approx(she["assumed_state_margin"].iloc[0], abs=1e-9)


# ------------------------------------------------------------------------------------------------
# input validation
# ------------------------------------------------------------------------------------------------
@pytest.mark.parametrize(
    "change, message",
    [
        ({"coverage": [0.5]}, "disagrees"),
        ({"adsorbates": ["3 OH*"], "sites": [2]}, "above 1 ML"),
        ({"adsorbates": ["H2O(l)"]}, "not an adsorbate"),
        ({"sites": [0]}, "positive"),
        ({"G": ["abc"]}, "not a number"),
    ],
)
def test_bad_rows_name_the_problem(change, message):
    df = pd.DataFrame({"surface": ["M"], "state": ["OH*"], "adsorbates": ["OH*"], "sites": [1], "G": [0.8]})
    for k, v in change.items():
        df[k] = v
    with pytest.raises(SurfaceStateError, match=message):
        read_surface_states(df)


def test_table_level_errors(tmp_path):
    with pytest.raises(SurfaceStateError, match="missing column"):
        read_surface_states(pd.DataFrame({"surface": ["M"], "state": ["x"], "G": [0.1]}))
    mixed = pd.DataFrame({"surface": ["M", "M"], "state": ["OH*", "O*"], "adsorbates": ["OH*", "O*"], "sites": [1, 4], "G": [0.8, 1.0]})
    with pytest.raises(SurfaceStateError, match="same cell"):
        read_surface_states(mixed)
    relabel = pd.DataFrame({"surface": ["M", "N"], "state": ["X", "X"], "adsorbates": ["OH*", "O*"], "sites": [1, 1], "G": [0.8, 1.0]})
    with pytest.raises(SurfaceStateError, match="same label"):
        read_surface_states(relabel)
    clean = pd.DataFrame({"surface": ["M"], "state": ["clean"], "adsorbates": ["*"], "sites": [1], "G": [0.3]})
    with pytest.raises(SurfaceStateError, match="must be 0"):
        read_surface_states(clean)
    path = tmp_path / "states.csv"
    path.write_text("# ILLUSTRATIVE\nsurface,state,adsorbates,sites,G\nM,OH*,OH*,1,0.8\nM,O*,O*,1,oops\n", encoding="utf-8")
    with pytest.raises(SurfaceStateError, match=r"states.csv at line 4, column 'G'"):
        read_surface_states(path)


def test_bundled_illustrative_states():
    from ecatlab.pourbaix import demo_surface_states

    states = demo_surface_states()
    assert "ILLUSTRATIVE" in states.source or any("ILLUSTRATIVE" in n for n in states.notes)
    assert len(states.surfaces) == 12 and CLEAN in states.states
    assert set(states.coverage().stack().unique()) >= {0.25, 0.5, 1.0}


def test_bundled_states_match_their_generator(tmp_path):
    import importlib.util
    import pathlib

    import ecatlab

    folder = pathlib.Path(ecatlab.__file__).parent / "data"
    spec = importlib.util.spec_from_file_location("make_states", folder / "make_illustrative_surface_states.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    made = module.main(tmp_path / "states.csv")
    assert made.read_text(encoding="utf-8") == (folder / "illustrative_surface_states.csv").read_text(encoding="utf-8")


# ------------------------------------------------------------------------------------------------
# command line
# ------------------------------------------------------------------------------------------------
def test_cli_pourbaix_demo_flags_and_figure(tmp_path, capsys):
    from ecatlab.cli import main

    fig = tmp_path / "map.svg"
    assert main(["pourbaix", "--demo", "--surface", "SAS-02", "-p", "orr-4e", "-o", str(fig)]) == 0
    out = capsys.readouterr().out
    assert "ILLUSTRATIVE" in out and "assumes clean but H* 1 ML" in out and fig.read_text().lstrip().startswith("<?xml")
    # never overwrite without --force; one-line error, exit 2
    assert main(["pourbaix", "--demo", "--surface", "SAS-02", "-o", str(fig)]) == 2
    assert "--force" in capsys.readouterr().err
    assert main(["pourbaix", "--demo", "--surface", "SAS-02", "-o", str(fig), "--force"]) == 0


def test_cli_pourbaix_file_json_matches_library(tmp_path, capsys):
    import json

    from ecatlab.cli import main

    path = tmp_path / "s.csv"
    path.write_text("surface,state,adsorbates,sites,G\nM,OH*,OH*,1,0.8\nM,O*,O*,1,2.0\n", encoding="utf-8")
    assert main(["pourbaix", str(path), "--scale", "she", "--pH", "7", "-U", "0.5", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    (t,) = data["transitions"]["M"][:1]
    assert t["from"] == CLEAN and t["to"] == "OH*"
    assert t["potential"] == pytest.approx(0.8 - 7 * kT_ln10(298.15), abs=1e-9)
    assert main(["pourbaix", str(tmp_path / "nope.csv")]) == 2


# ------------------------------------------------------------------------------------------------
# explorer tab
# ------------------------------------------------------------------------------------------------
def test_explorer_surface_states_tab_draws_only_when_visible():
    pytest.importorskip("ipywidgets")
    from ecatlab.demo import demo_energies
    from ecatlab.explorer import Explorer
    from ecatlab.pourbaix import demo_surface_states

    ex = Explorer(demo_energies(), surfaces=["SAS-02"])
    base = len(ex.tabs.children)
    assert ex.pourbaix is None and "surface states" not in ex.tabs.titles  # opt-in tab
    panel = ex.add_surface_states_tab()
    assert ex.tabs.titles[-1] == "surface states" and ex.pourbaix is panel
    assert ex.pourbaix.draws == 0  # hidden: nothing drawn
    ex.potential.value = 0.3
    assert ex.pourbaix.draws == 0
    assert len(ex.tabs.children) == base + 1
    ex.tabs.selected_index = base  # the appended tab
    assert ex.pourbaix.draws == 1 and ex.errors == []
    ex.pourbaix.set_states(demo_surface_states())
    ex._refresh()
    assert ex.pourbaix.draws == 2 and ex.pourbaix.last_png[:4] == b"\x89PNG"
    # the read-out is the library's answer at the applied potential
    expect = stable_states(demo_surface_states(), 0.3, 0.0, "RHE", surfaces=["SAS-02"]).iloc[0]["stable_state"]
    assert f"the stable state is <b>{expect}</b>" in ex.pourbaix.last_text
    assert "H* 1 ML" in ex.pourbaix.last_text  # SAS-02 is H-covered at its ORR U_L (flag shown)


def test_report_sections_are_well_formed_and_self_contained():
    import xml.etree.ElementTree as ET

    from ecatlab.demo import demo_energies
    from ecatlab.pourbaix import demo_surface_states
    from ecatlab.report import build_report

    text = build_report(demo_energies(), ["orr-4e", "her-volmer-heyrovsky"], surfaces=["SAS-02", "ALY-01"], descriptors=True,
                        surface_states=demo_surface_states())
    root = ET.fromstring(text.split("\n", 1)[1])
    assert root.tag == "html"
    assert 'id="surface-pourbaix"' in text and 'id="descriptors"' in text
    # SAS-02: H-covered at its HER and ORR limiting potentials (state text typeset by ecatlab.chemtext: H∗)
    assert "assumes clean but H\u2217 1 ML" in text
    assert "http://" not in text and "https://" not in text and "<script" not in text

