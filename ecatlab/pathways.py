"""Built-in reaction pathways (textbook CHE mechanisms).

Each pathway is written in ecatlab notation, one step per line, and parsed (hence balance
checked) when first requested. Keys are stable; :func:`list_pathways` documents each one.
Products in aqueous electrolyte are taken in the phase stated in the step (e.g. ``H2O2(aq)``,
``HCOOH(aq)``, ``CH3OH(aq)``), gases at 1 bar.
"""

from __future__ import annotations

from functools import lru_cache

import pandas as pd

from ecatlab.errors import UnknownPathwayError
from ecatlab.notation import Pathway

__all__ = ["pathway", "list_pathways", "BUILTIN_PATHWAYS", "REACTION_FAMILIES"]

# key -> (reaction family, description, state labels, steps)
BUILTIN_PATHWAYS: dict[str, tuple[str, str, tuple[str, ...], str]] = {
    "orr-4e": (
        "ORR",
        "4-electron oxygen reduction to water, associative route via OOH*",
        ("O2(g)", "OOH*", "O*", "OH*", "2 H2O(l)"),
        """
        O2(g) + * + H+ + e- -> OOH*
        OOH* + H+ + e- -> O* + H2O(l)
        O* + H+ + e- -> OH*
        OH* + H+ + e- -> * + H2O(l)
        """,
    ),
    "orr-4e-dissociative": (
        "ORR",
        "4-electron oxygen reduction to water, dissociative route (O2 splits on two sites, chemical step)",
        ("O2(g)", "2 O*", "O* + OH*", "O*", "OH*", "2 H2O(l)"),
        """
        O2(g) + 2 * -> 2 O*
        2 O* + H+ + e- -> O* + OH*
        O* + OH* + H+ + e- -> O* + * + H2O(l)
        O* + * + H+ + e- -> OH* + *
        OH* + * + H+ + e- -> 2 * + H2O(l)
        """,
    ),
    "orr-2e": (
        "ORR",
        "2-electron oxygen reduction to hydrogen peroxide (aqueous), via OOH*",
        ("O2(g)", "OOH*", "H2O2(aq)"),
        """
        O2(g) + * + H+ + e- -> OOH*
        OOH* + H+ + e- -> * + H2O2(aq)
        """,
    ),
    "oer-4e": (
        "OER",
        "4-electron oxygen evolution from water via OH*, O*, OOH*",
        ("2 H2O(l)", "OH*", "O*", "OOH*", "O2(g)"),
        """
        H2O(l) + * -> OH* + H+ + e-
        OH* -> O* + H+ + e-
        O* + H2O(l) -> OOH* + H+ + e-
        OOH* -> * + O2(g) + H+ + e-
        """,
    ),
    "her-volmer-heyrovsky": (
        "HER",
        "hydrogen evolution: proton discharge (Volmer) then electrochemical desorption (Heyrovsky)",
        ("2 H+ + 2 e-", "H*", "H2(g)"),
        """
        * + H+ + e- -> H*
        H* + H+ + e- -> * + H2(g)
        """,
    ),
    "her-volmer-tafel": (
        "HER",
        "hydrogen evolution: two proton discharges (Volmer) then chemical recombination (Tafel)",
        ("2 H+ + 2 e-", "H*", "2 H*", "H2(g)"),
        """
        2 * + H+ + e- -> H* + *
        H* + * + H+ + e- -> 2 H*
        2 H* -> 2 * + H2(g)
        """,
    ),
    "co2rr-co": (
        "CO2RR",
        "CO2 reduction to CO(g) via carboxyl COOH*, then CO desorption (chemical step)",
        ("CO2(g)", "COOH*", "CO*", "CO(g)"),
        """
        CO2(g) + * + H+ + e- -> COOH*
        COOH* + H+ + e- -> CO* + H2O(l)
        CO* -> * + CO(g)
        """,
    ),
    "co2rr-hcooh": (
        "CO2RR",
        "CO2 reduction to formic acid (aqueous) via formate OCHO*",
        ("CO2(g)", "OCHO*", "HCOOH(aq)"),
        """
        CO2(g) + * + H+ + e- -> OCHO*
        OCHO* + H+ + e- -> * + HCOOH(aq)
        """,
    ),
    "co2rr-ch4": (
        "CO2RR",
        "CO2 reduction to methane via COOH*, CO*, CHO* (formyl), CH2O*, CH3O*, then O*/OH* removal",
        ("CO2(g)", "COOH*", "CO*", "CHO*", "CH2O*", "CH3O*", "O* + CH4(g)", "OH* + CH4(g)", "CH4(g) + 2 H2O(l)"),
        """
        CO2(g) + * + H+ + e- -> COOH*
        COOH* + H+ + e- -> CO* + H2O(l)
        CO* + H+ + e- -> CHO*
        CHO* + H+ + e- -> CH2O*
        CH2O* + H+ + e- -> CH3O*
        CH3O* + H+ + e- -> O* + CH4(g)
        O* + H+ + e- -> OH*
        OH* + H+ + e- -> * + H2O(l)
        """,
    ),
    "co2rr-ch4-coh": (
        "CO2RR",
        "CO2 reduction to methane via COOH*, CO*, COH* (hydroxymethylidyne), C*, CH*, CH2*, CH3*",
        ("CO2(g)", "COOH*", "CO*", "COH*", "C*", "CH*", "CH2*", "CH3*", "CH4(g) + 2 H2O(l)"),
        """
        CO2(g) + * + H+ + e- -> COOH*
        COOH* + H+ + e- -> CO* + H2O(l)
        CO* + H+ + e- -> COH*
        COH* + H+ + e- -> C* + H2O(l)
        C* + H+ + e- -> CH*
        CH* + H+ + e- -> CH2*
        CH2* + H+ + e- -> CH3*
        CH3* + H+ + e- -> * + CH4(g)
        """,
    ),
    "co2rr-ch3oh": (
        "CO2RR",
        "CO2 reduction to methanol (aqueous) via COOH*, CO*, CHO*, CH2O*, CH3O*",
        ("CO2(g)", "COOH*", "CO*", "CHO*", "CH2O*", "CH3O*", "CH3OH(aq) + H2O(l)"),
        """
        CO2(g) + * + H+ + e- -> COOH*
        COOH* + H+ + e- -> CO* + H2O(l)
        CO* + H+ + e- -> CHO*
        CHO* + H+ + e- -> CH2O*
        CH2O* + H+ + e- -> CH3O*
        CH3O* + H+ + e- -> * + CH3OH(aq)
        """,
    ),
    "nrr-distal": (
        "NRR",
        "N2 reduction to NH3(g), distal route: the outer N is hydrogenated to NH3 first",
        ("N2(g)", "NNH*", "NNH2*", "N* + NH3(g)", "NH* + NH3(g)", "NH2* + NH3(g)", "NH3* + NH3(g)", "2 NH3(g)"),
        """
        N2(g) + * + H+ + e- -> NNH*
        NNH* + H+ + e- -> NNH2*
        NNH2* + H+ + e- -> N* + NH3(g)
        N* + H+ + e- -> NH*
        NH* + H+ + e- -> NH2*
        NH2* + H+ + e- -> NH3*
        NH3* -> * + NH3(g)
        """,
    ),
    "nrr-alternating": (
        "NRR",
        "N2 reduction to NH3(g), alternating route: the two N atoms are hydrogenated in turn",
        ("N2(g)", "NNH*", "NHNH*", "NHNH2*", "NH2NH2*", "NH2* + NH3(g)", "NH3* + NH3(g)", "2 NH3(g)"),
        """
        N2(g) + * + H+ + e- -> NNH*
        NNH* + H+ + e- -> NHNH*
        NHNH* + H+ + e- -> NHNH2*
        NHNH2* + H+ + e- -> NH2NH2*
        NH2NH2* + H+ + e- -> NH2* + NH3(g)
        NH2* + H+ + e- -> NH3*
        NH3* -> * + NH3(g)
        """,
    ),
}

#: Reaction family -> built-in keys, in display order.
REACTION_FAMILIES: dict[str, tuple[str, ...]] = {}
for _key, (_family, *_rest) in BUILTIN_PATHWAYS.items():
    REACTION_FAMILIES.setdefault(_family, ())
    REACTION_FAMILIES[_family] = REACTION_FAMILIES[_family] + (_key,)


@lru_cache(maxsize=None)
def pathway(key: str) -> Pathway:
    """The built-in pathway with this key (see :func:`list_pathways`).

    Raises
    ------
    UnknownPathwayError
        If the key is unknown; the message lists the known keys.
    """
    if isinstance(key, Pathway):
        return key
    if key not in BUILTIN_PATHWAYS:
        raise UnknownPathwayError(key, list(BUILTIN_PATHWAYS))
    family, description, labels, text = BUILTIN_PATHWAYS[key]
    return Pathway.parse(text, name=key, description=description, state_labels=labels)


def list_pathways() -> pd.DataFrame:
    """Table of the built-in pathways.

    Columns: ``key``, ``reaction`` (family: ORR, OER, HER, CO2RR, NRR), ``direction``,
    ``electrons`` (per overall reaction), ``overall`` (net equation), ``intermediates``,
    ``description``.
    """
    rows = []
    for key, (family, description, _labels, _text) in BUILTIN_PATHWAYS.items():
        p = pathway(key)
        rows.append(
            {
                "key": key,
                "reaction": family,
                "direction": p.direction,
                "electrons": abs(p.total_electrons),
                "overall": p.overall_step().equation,
                "intermediates": ", ".join(a.key for a in p.adsorbates),
                "description": description,
            }
        )
    return pd.DataFrame(rows)


def resolve(pathway_or_key) -> Pathway:
    """A :class:`Pathway` from a key, a Pathway, or multi-line step text."""
    if isinstance(pathway_or_key, Pathway):
        return pathway_or_key
    if isinstance(pathway_or_key, str) and "->" in pathway_or_key:
        return Pathway.parse(pathway_or_key, name="custom")
    return pathway(pathway_or_key)
