"""Exceptions raised by featuresift.

:class:`InputError` is the one error type for bad input (config, data, costs,
options). Its message names the problem and its place (YAML key and line, column or
feature); the command-line tool prints it on one line and exits with code 2.
"""

from __future__ import annotations

__all__ = ["InputError", "FitFailedError"]


class InputError(ValueError):
    """Bad user input, with a message that names its place.

    Parameters
    ----------
    message : str
        What is wrong.
    key : str, optional
        Dotted config key (``"costs.panels.mycotoxins"``) the problem belongs to.
    line : int, optional
        1-based line of that key in the YAML file, when known.

    Examples
    --------
    >>> str(InputError("cost must be >= 0", key="costs.features.moisture", line=12))
    'costs.features.moisture (line 12): cost must be >= 0'
    """

    def __init__(self, message: str, key: str | None = None, line: int | None = None):
        self.message = message
        self.key = key
        self.line = line
        super().__init__(self._format())

    def _format(self) -> str:
        if self.key is None:
            return self.message
        where = self.key if self.line is None else f"{self.key} (line {self.line})"
        return f"{where}: {self.message}"


class FitFailedError(RuntimeError):
    """A model fit or its score failed while the failure policy was ``"raise"``.

    A score that is NaN or infinite (an undefined metric, such as ROC AUC on a test
    fold holding one class) is a failure too. The message names the subset (by feature
    names when the evaluator knows them) and the fold.

    Parameters
    ----------
    message : str
        What failed, where.
    subset : tuple of int, optional
        Column indices of the subset whose fit failed.
    fold : int, optional
        0-based index of the CV fold.
    reason : str, optional
        The underlying error (``"ValueError: ..."``) without the place.

    Examples
    --------
    >>> import numpy as np
    >>> from sklearn.linear_model import LinearRegression
    >>> from featuresift import SelectionProblem
    >>> from featuresift.engine.evaluator import CrossValidationEvaluator
    >>> X = np.array([[1.0], [2.0], [np.nan], [4.0]])
    >>> p = SelectionProblem(X, np.arange(4.0), LinearRegression(), cv=2)
    >>> ev = CrossValidationEvaluator(p)
    >>> try:
    ...     ev.evaluate([[0]])
    ... except FitFailedError as exc:
    ...     print(str(exc).split(":")[0], exc.subset, exc.fold)
    fit failed on subset [x0], fold 0 of 2 (0-based) (0,) 0
    """

    def __init__(self, message: str, subset: tuple[int, ...] | None = None,
                 fold: int | None = None, reason: str | None = None) -> None:
        super().__init__(message)
        self.subset = None if subset is None else tuple(subset)
        self.fold = fold
        self.reason = reason

    def __reduce__(self):  # keep the place when the error crosses a process boundary
        return (type(self), (str(self), self.subset, self.fold, self.reason))
