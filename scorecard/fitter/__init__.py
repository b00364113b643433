"""The fitter: maximum-likelihood logistic regression of the good:bad odds on weighted rows or pattern tables.

- ``problem``: the problem and its cost (penalised negative log-likelihood per unit weight), its
  gradient and curvature, and the standardisation of the columns;
- ``guards``: linear dependence and separation, found and named;
- ``solvers``: Newton–Raphson with step-halving, gradient descent, L-BFGS; one stopping rule, one result;
- ``inputs``: the checks at entry;
- ``fit``: ``fit_logistic``, the entry;
- ``parts``: ``fit_logistic_by_parts``, for a table too large to hold as one design matrix;
- ``sums``: ``fit_logistic_by_sums``, for a table an engine keeps: each Newton step one pass of sums there;
- ``nested``: ``NestedFits``, the trial fits of a stepwise search and the score tests between them.
"""

from .fit import fit_logistic
from .parts import PART_ROWS, fit_logistic_by_parts
from .problem import PartCounts, gradient, information_matrix, log_likelihood
from .inputs import SOLVERS
from .nested import NestedFits
from .result import INTERCEPT_NAME, FitResult
from .sums import Sums, fit_logistic_by_sums

__all__ = [
    "INTERCEPT_NAME", "PART_ROWS", "SOLVERS", "FitResult", "NestedFits", "PartCounts", "Sums", "fit_logistic",
    "fit_logistic_by_parts", "fit_logistic_by_sums", "gradient", "information_matrix", "log_likelihood",
]
