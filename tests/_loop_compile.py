"""The per-step definition of the CHE compile, shared by tests/test_compile_assembly.py and
tests/benchmarks/bench_network_c3.py (the reference the engine's numpy assembly must equal bit for bit)."""

import numpy as np

from ecatlab.notation import ELECTRON, HYDROXIDE, PROTON


def loop_compile(steps, adsorbates, scheme):
    """The textbook way: one pass per step over ``Step.net()`` into (steps x adsorbates) arrays.

    Same conventions as the engine: products positive; electrons and protons counted as consumed;
    H+ costs 1/2 G(H2) of the scheme at pH 0, OH- costs G(H2O(l)) - 1/2 G(H2).
    """
    index = {k: j for j, k in enumerate(adsorbates)}
    stoich = np.zeros((len(steps), len(adsorbates)))
    mol, electrons, protons = np.zeros(len(steps)), np.zeros(len(steps)), np.zeros(len(steps))
    half_h2 = scheme.proton_electron_free_energy()
    for i, step in enumerate(steps):
        for sp, c in step.net().items():
            if sp.is_adsorbate:
                stoich[i, index[sp.key]] += c
            elif sp.is_molecule:
                mol[i] += c * scheme.molecule_free_energy(sp)
            elif sp == ELECTRON:
                electrons[i] -= c
            elif sp == PROTON:
                protons[i] -= c
                mol[i] += c * half_h2
            elif sp == HYDROXIDE:
                protons[i] += c
                mol[i] += c * (scheme.molecule_free_energy("H2O(l)") - half_h2)
    return stoich, mol, electrons, protons
