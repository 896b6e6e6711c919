"""Errors and warnings of ecatlab.

Every error derives from :class:`EcatlabError` and also from the matching built-in exception,
so ``except ValueError`` keeps working. Each error keeps its details as attributes and builds
its message from them, so callers (CLI, widgets, reports) can show them without parsing text.
"""

from __future__ import annotations

from typing import Any


class EcatlabError(Exception):
    """Base class of all ecatlab errors."""


class NotationError(EcatlabError, ValueError):
    """A species, step or pathway string cannot be parsed.

    Attributes
    ----------
    text : str
        The offending text.
    reason : str
        What is wrong and how to fix it.
    """

    def __init__(self, text: str, reason: str):
        self.text = text
        self.reason = reason
        super().__init__(f"cannot read {text!r}: {reason}")


class BalanceError(NotationError):
    """A step is not balanced in elements, charge or adsorption sites.

    Attributes
    ----------
    step : str
        The step as written.
    imbalance : dict
        Per element (or ``"charge"``, ``"sites"``): products minus reactants.
    """

    def __init__(self, step: str, imbalance: dict[str, float]):
        self.step = step
        self.imbalance = dict(imbalance)
        parts = ", ".join(f"{k}: {v:+g}" for k, v in self.imbalance.items())
        EcatlabError.__init__(
            self,
            f"step {step!r} is not balanced (right side minus left side: {parts}); "
            "fix the coefficients so that every element, the charge and the number of sites match",
        )
        self.text = step
        self.reason = "unbalanced"


class PathwayError(EcatlabError, ValueError):
    """A pathway is inconsistent (unknown key, mixed directions, not a cycle...)."""


class UnknownPathwayError(PathwayError, KeyError):
    """No built-in pathway has this key."""

    def __init__(self, key: str, known: list[str]):
        self.key = key
        self.known = list(known)
        ValueError.__init__(self, f"no built-in pathway {key!r}; known keys: {', '.join(self.known)}")

    def __str__(self) -> str:  # KeyError would quote the message
        return self.args[0]


class EnergyTableError(EcatlabError, ValueError):
    """The energy table has a problem the user must fix.

    Attributes
    ----------
    source : str
        File name or ``"<DataFrame>"``.
    problem : str
        What is wrong and how to fix it.
    rows : list
        The offending row locations (line numbers for files, index labels for frames).
    column : str or None
        The offending column, where one is concerned.
    """

    def __init__(self, source: str, problem: str, rows: list[Any] | None = None, column: str | None = None):
        self.source = source
        self.problem = problem
        self.rows = list(rows or [])
        self.column = column
        where = ""
        if self.rows:
            shown = ", ".join(str(r) for r in self.rows[:10])
            more = f" and {len(self.rows) - 10} more" if len(self.rows) > 10 else ""
            where += f" at {shown}{more}"
        if column is not None:
            where += f", column {column!r}"
        super().__init__(f"{source}{where}: {problem}")


class MissingSpeciesError(EcatlabError, KeyError):
    """A surface lacks an adsorbate energy that a pathway needs.

    Attributes
    ----------
    missing : dict
        Surface name -> list of missing species keys.
    pathway : str
        The pathway that needs them.
    """

    def __init__(self, pathway: str, missing: dict[str, list[str]]):
        self.pathway = pathway
        self.missing = {k: list(v) for k, v in missing.items()}
        parts = "; ".join(f"{s}: {', '.join(v)}" for s, v in list(self.missing.items())[:10])
        more = f" (and {len(self.missing) - 10} more surfaces)" if len(self.missing) > 10 else ""
        msg = (
            f"pathway {pathway!r} needs adsorbate energies that are missing for {parts}{more}; "
            "add rows for them, or pass on_missing='report' to get these surfaces flagged instead"
        )
        Exception.__init__(self, msg)

    def __str__(self) -> str:
        return self.args[0]


class ReferenceSchemeError(EcatlabError, ValueError):
    """A species cannot be referenced (composition not reachable from the reference molecules,
    unknown gas-phase free energy...)."""


class ConditionError(EcatlabError, ValueError):
    """Bad conditions: potential scale, pH, temperature."""


class ThermochemistryError(EcatlabError, ValueError):
    """Bad vibrational or thermochemical input (imaginary modes, units, spin...)."""


class IngestError(EcatlabError, ValueError):
    """DFT output cannot be ingested. ``path`` names the file or folder."""

    def __init__(self, path: str, problem: str):
        self.path = str(path)
        self.problem = problem
        super().__init__(f"{self.path}: {problem}")


class TableInputError(EcatlabError, ValueError):
    """The frame given to a table function is not a limiting-potential frame."""


class OutputFolderError(EcatlabError, FileExistsError):
    """An output folder exists with files ecatlab did not write (they are never overwritten)."""


class EcatlabWarning(UserWarning):
    """Base class of ecatlab warnings."""


class MissingDataWarning(EcatlabWarning):
    """Some surfaces could not be evaluated for a pathway; they are reported, not dropped."""


class ConditionsWarning(EcatlabWarning):
    """Conditions outside the validity of a tabulated quantity (e.g. T far from 298.15 K)."""


class CorrectionWarning(EcatlabWarning):
    """A thermochemical correction was assumed, modified or applied implicitly."""


class ScalingError(EcatlabError, ValueError):
    """A scaling-relation fit or a volcano/map built on scaling relations cannot be done
    (too few surfaces, an adsorbate not tied to the descriptors, dependent descriptors...)."""


class DatasetError(EcatlabError, ValueError):
    """A Parquet energy dataset, a Dask computation over one, or its output cannot be used.

    Survives pickling (errors raised on Dask workers reach the caller unchanged).

    Attributes
    ----------
    source : str
        Dataset folder, file or ``"<Dask DataFrame>"``.
    problem : str
        What is wrong and how to fix it.
    location : str or None
        File, row group and row (or partition and row label) where known.
    column : str or None
        The offending column, where one is concerned.
    """

    def __init__(self, source: str, problem: str, location: str | None = None, column: str | None = None):
        self.source = str(source)
        self.problem = problem
        self.location = location
        self.column = column
        where = f" ({location})" if location else ""
        col = f", column {column!r}" if column else ""
        super().__init__(f"{self.source}{where}{col}: {problem}")

    def __reduce__(self):
        return (type(self), (self.source, self.problem, self.location, self.column))
