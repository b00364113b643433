"""The result of a logistic fit: estimates, standard errors and fit statistics, read-only."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

INTERCEPT_NAME = "(intercept)"


@dataclass(frozen=True, eq=False)  # eq=False: arrays have no single truth value to compare by
class FitResult:
    """Estimates of a logistic fit of the log-odds of good:bad, with their standard errors.

    Attributes
    ----------
    names : tuple of str
        ``"(intercept)"`` first when the model has one, then the characteristics in order.
    coefficients, std_errors, z_values, p_values : numpy.ndarray
        One entry per name, read-only. ``z_values`` are Wald statistics ``coefficient / std_error``
        and ``p_values`` their two-sided tail probabilities under the standard normal distribution.
    covariance : numpy.ndarray
        Inverse of the information matrix at the estimate (penalised when ``l2 > 0``), read-only.
    log_likelihood : float
        ``Σ goods·ln p + bads·ln(1 − p)`` at the estimate, without the penalty.
    deviance : float
        ``−2 × log_likelihood``. This is the individual-level deviance, so it is the same on the
        rows and on their pattern table; it is not the grouped deviance against a saturated
        pattern model that some packages report for grouped data.
    aic, bic : float
        ``deviance + 2k`` and ``deviance + k·ln(n_observations)``, with ``k`` the number of
        coefficients (a nominal count: with ``l2 > 0`` the effective number is smaller).
    n_observations : float
        Total weight, goods plus bads.
    iterations : int
        Steps the solver took.
    converged : bool
        Whether the stopping rule of :func:`fit_logistic` was met.
    cost_trace : tuple of float
        Cost (penalised negative log-likelihood per unit weight) at the start and after each step.
    solver : str
        ``"newton"``, ``"gradient"`` or ``"lbfgs"``.
    l2 : float
        The ridge penalty the fit used.
    """

    names: tuple[str, ...]
    coefficients: np.ndarray
    std_errors: np.ndarray
    z_values: np.ndarray
    p_values: np.ndarray
    covariance: np.ndarray
    log_likelihood: float
    deviance: float
    aic: float
    bic: float
    n_observations: float
    iterations: int
    converged: bool
    cost_trace: tuple[float, ...]
    solver: str
    l2: float

    def __post_init__(self):
        for field in ("coefficients", "std_errors", "z_values", "p_values", "covariance"):
            array = np.array(getattr(self, field), dtype=float)
            array.setflags(write=False)
            object.__setattr__(self, field, array)

    def coefficient(self, name: str) -> float:
        """Return the coefficient of one name.

        Raises
        ------
        KeyError
            If ``name`` is not among :attr:`names`; the message lists the names there are.
        """
        if name not in self.names:
            raise KeyError(f"no coefficient named {name!r}; the fit has {', '.join(map(repr, self.names))}")
        return float(self.coefficients[self.names.index(name)])

    def to_frame(self) -> pd.DataFrame:
        """Return the estimates as a table: name, coefficient, std_error, z, p_value."""
        return pd.DataFrame(
            {
                "name": list(self.names),
                "coefficient": self.coefficients,
                "std_error": self.std_errors,
                "z": self.z_values,
                "p_value": self.p_values,
            }
        )
