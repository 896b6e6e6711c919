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
        super().__init__(f"cannot read {clip(text)!r}: {reason}")


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
        import difflib

        self.key = key
        self.known = list(known)
        close = difflib.get_close_matches(str(key), self.known, n=1, cutoff=0.6) if len(str(key)) <= 200 else []
        hint = f" (did you mean {close[0]!r}?)" if close else ""
        ValueError.__init__(self, f"no built-in pathway {clip(key)!r}{hint}; known keys: {', '.join(self.known)}")

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


class EstimatedValueWarning(EcatlabWarning):
    """Values were estimated (e.g. missing adsorption energies filled from scaling relations);
    the message says how many, from which models, and with which leave-one-out error."""


class SurfaceStateError(EnergyTableError):
    """A surface-state table (for surface Pourbaix diagrams) has a problem the user must fix.

    Same attributes and message as :class:`EnergyTableError` (source, problem, rows, column).
    """


class DescriptorError(EcatlabError, ValueError):
    """A descriptor (PCA) analysis cannot be done (too few surfaces or adsorbates, bad options)."""


#: Longest echo of a user value in a message (characters); longer values are cut with "...".
ECHO_LIMIT = 80


def clip(value: Any, limit: int = ECHO_LIMIT) -> str:
    """``str(value)`` cut to ``limit`` characters (with the total length) so messages stay readable.

    Control characters are shown escaped (``\\x00``) so one message stays one line.
    """
    full = str(value)
    text = "".join(ch if ch >= " " and ch != "\x7f" else repr(ch)[1:-1] for ch in full[: limit + 1])
    if len(full) <= limit and len(text) <= limit:
        return text
    return f"{text[:limit - 3]}... ({len(full)} characters)"


class OutputPathError(EcatlabError, ValueError):
    """An output path cannot be used (a folder, wrong extension, one of the inputs, unwritable...)."""


class OutputExistsError(EcatlabError, FileExistsError):
    """An output file exists and ``--force`` / ``force=True`` was not given (files are never silently replaced)."""


class OptionError(EcatlabError, ValueError):
    """A command-line option or API argument has a value outside its range, or is unknown."""


class InputFileError(EcatlabError, ValueError):
    """An input file cannot be read as text (binary, not UTF-8, not found)."""


class ExplorerValueError(EcatlabError, ValueError):
    """A value typed into the explorer is not usable (not a number, out of range)."""


class InputTypeError(EcatlabError, TypeError):
    """An argument has the wrong type (e.g. a number where species text is expected)."""


def require_text(value: Any, what: str) -> str:
    """``value`` if it is a str, else an :class:`InputTypeError` naming ``what``."""
    if not isinstance(value, str):
        raise InputTypeError(f"{what} must be text, got {type(value).__name__} {clip(repr(value))}")
    return value


def clip_path(value: Any, limit: int = 160) -> str:
    """A path for a message: whole up to ``limit`` characters, else its start and its end (the file name)."""
    full = str(value)
    if len(full) <= limit:
        return clip(full, limit)
    tail = limit - 45
    return f"{clip(full[:40], 40)}...{clip(full[-tail:], tail)}"


class UncertaintyError(EcatlabError, ValueError):
    """An error model, ensemble or uncertainty request is inconsistent (names the item and the fix)."""


class KineticsInputError(EcatlabError, ValueError):
    """Bad input to a microkinetic model (barrier table, activities, interactions, potentials)."""


class KineticsConvergenceWarning(EcatlabWarning):
    """A steady state was not found (or several were) at some (surface, potential) points; they
    are flagged in the result (``converged``, ``steady_states``) and never silently filled."""


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
