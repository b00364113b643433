"""The solvers: Newton–Raphson with step-halving, gradient descent, L-BFGS; one stopping rule, one result.

Each solver returns a ``Path`` with the estimate in the coordinates it worked in. Steps are judged
by ``cost_change``, which evaluates cost(new) − cost(old) to the rounding of the change rather than
of the cost: near the optimum a step lowers the cost by far less than one rounding unit of the
cost itself, and comparing two costs would then accept or refuse it at random.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np
from scipy import linalg, special

from ..errors import FitError
from .guards import numerically_singular_message, overlap_proved, patterns, raise_if_separated
from .problem import (
    Parts, Problem, SingularInformation, Standardisation, cost, cost_change, cost_gradient, cost_gradient_and_hessian,
    cost_hessian, solve_symmetric, standardisation_of, standardised, weighted_gram,
)
from .result import FitResult


# Newton converges quadratically, so 100 steps is generous; plain gradient descent converges
# linearly, at a rate set by the condition number, and needs thousands.
DEFAULT_MAX_ITERATIONS = {"newton": 100, "gradient": 100_000, "lbfgs": 10_000}


# Step-halving gives up after this many halvings: 2**-52 of a Newton step is below rounding.
MAX_HALVINGS = 52


def fit_problem(problem: Problem, names: tuple[str, ...], rule: StoppingRule, *, solver: str, l2: float, start,
         standardise: bool, checks: bool, remake=None) -> FitResult:
    """Run the solver in standardised (or, for descents without standardise, raw) coordinates.

    ``remake``, when given, says the problem's design in memory belongs to this fit: it is then
    standardised in place (one design's worth of memory fewer, and the time of writing it), and
    ``remake()`` makes the problem as it was, for the separation check when that has to run.
    """
    standardisation = standardisation_of(problem)
    # Newton's steps do not depend on the scale, but centred columns keep its linear algebra well
    # conditioned, so it always works on the standardised problem.
    on_standard = standardise or solver == "newton"
    in_place = remake is not None and on_standard and not isinstance(problem.design, Parts)
    start = problem.intercept_only if start is None else start
    standard = standardised(problem, standardisation, in_place=in_place)
    original = remake if in_place else (lambda: problem)
    if on_standard:
        working, working_start = standard, standardisation.to_standard(start)
    else:
        working, working_start, rule = problem, start, dataclasses.replace(rule, standardisation=standardisation)
    try:
        path = _SOLVE[solver](working, rule, working_start)
        theta = path.coefficients if on_standard else standardisation.to_standard(path.coefficients)
        result = fit_result(standard, standardisation, theta, path, names, solver=solver, l2=l2)
    except SingularInformation as singular:
        if checks:
            raise_if_separated(patterns(original()), names, intercept=problem.intercept)
        raise FitError(numerically_singular_message(singular, names, intercept=problem.intercept)) from None
    if checks and solver == "newton" and not (path.converged and overlap_proved(standard, theta)):
        raise_if_separated(patterns(original()), names, intercept=problem.intercept)
    return result


@dataclass(frozen=True, eq=False)
class StoppingRule:
    max_iterations: int
    tolerance: float
    gradient_tolerance: float
    standardisation: Standardisation  # from the solver's coordinates to the standardised ones the gradient is judged in

    def met(self, decrease: float, working_gradient: np.ndarray) -> bool:
        """Whether the cost fell by at most tolerance and the standardised gradient is small."""
        standard = self.standardisation.gradient_to_standard(working_gradient)
        return decrease <= self.tolerance and np.max(np.abs(standard)) <= self.gradient_tolerance


@dataclass(frozen=True, eq=False)
class Path:
    coefficients: np.ndarray  # in the coordinates the solver worked in
    iterations: int
    converged: bool
    cost_trace: tuple[float, ...]
    curvature: np.ndarray | None = None  # the cost's curvature at the coefficients, when the solver has it


def _newton(problem: Problem, rule: StoppingRule, start: np.ndarray) -> Path:
    """Newton–Raphson with step-halving."""
    beta = start
    trace, decrease = [cost(problem, beta)], np.inf
    # the gradient and the curvature come from one evaluation at each point; the curvature at the
    # last point is the result's covariance, so it is never computed twice
    current_gradient, curvature = cost_gradient_and_hessian(problem, beta)
    while not rule.met(decrease, current_gradient) and len(trace) <= rule.max_iterations:
        step = -solve_symmetric(curvature, current_gradient, problem, beta)
        accepted = _halved_step(problem, beta, step)
        if accepted is None:
            # No fraction of the step lowers the cost: only the gradient can still tell.
            decrease = 0.0
            break
        beta, decrease = accepted[0], -accepted[1]
        current_gradient, curvature = cost_gradient_and_hessian(problem, beta)
        trace.append(trace[-1] - decrease)
    return Path(beta, len(trace) - 1, rule.met(decrease, current_gradient), tuple(trace), curvature)


def _halved_step(problem: Problem, beta: np.ndarray, step: np.ndarray):
    """The first of step, step/2, step/4, … that does not raise the cost, with the change in cost."""
    for halvings in range(MAX_HALVINGS):
        candidate = beta + step * 0.5**halvings
        change = cost_change(problem, beta, candidate)
        if change <= 0:
            return candidate, change
    return None


def _gradient_descent(problem: Problem, rule: StoppingRule, start: np.ndarray) -> Path:
    """Batch gradient descent from the step 1/L, trying doubled steps under Armijo's rule."""
    hessian_bound = weighted_gram(problem, problem.weights) / 4
    lipschitz = (linalg.eigvalsh(hessian_bound)[-1] + problem.ridge.max()) / problem.total_weight
    safe_step = 1.0 / lipschitz
    theta, step = start, safe_step
    trace, decrease = [cost(problem, theta)], np.inf
    current_gradient = cost_gradient(problem, theta)
    while not rule.met(decrease, current_gradient) and len(trace) <= rule.max_iterations:
        theta, change, step = _armijo_step(problem, theta, current_gradient, 2 * step, safe_step)
        decrease = -change
        current_gradient = cost_gradient(problem, theta)
        trace.append(trace[-1] + change)
    return Path(theta, len(trace) - 1, rule.met(decrease, current_gradient), tuple(trace))


def _armijo_step(problem: Problem, theta: np.ndarray, current_gradient: np.ndarray, step: float, safe_step: float):
    """Halve a trial step until it lowers the cost by half its first-order promise (or is safe)."""
    promise = current_gradient @ current_gradient
    while True:
        candidate = theta - step * current_gradient
        change = cost_change(problem, theta, candidate)
        if step <= safe_step or change <= -0.5 * step * promise:
            return candidate, change, step
        step = max(step / 2, safe_step)


def _lbfgs(problem: Problem, rule: StoppingRule, start: np.ndarray) -> Path:
    """scipy's L-BFGS-B with the analytic gradient, restarted from where its line search stalls.

    Each run minimises the change in cost from its own starting point, which near the optimum is
    known far more precisely than the cost; a run that stalls on rounding is restarted from there.
    """
    from scipy import optimize  # imported here: only this solver and the separation check need it

    theta, trace, iterations, decrease = start, [cost(problem, start)], 0, np.inf
    while iterations < rule.max_iterations:
        reference, reference_cost = theta, trace[-1]
        result = optimize.minimize(
            _change_and_gradient,
            reference,
            args=(problem, reference),
            jac=True,
            method="L-BFGS-B",
            callback=lambda intermediate_result: trace.append(reference_cost + float(intermediate_result.fun)),
            # ftol 0: stop on the gradient alone, then judge by the common rule.
            options={"maxiter": rule.max_iterations - iterations, "gtol": rule.gradient_tolerance, "ftol": 0.0},
        )
        theta, iterations = result.x, iterations + int(result.nit)
        decrease = trace[-2] - trace[-1] if len(trace) > 1 else np.inf
        if result.nit == 0 or rule.met(decrease, cost_gradient(problem, theta)):
            break
    return Path(theta, iterations, rule.met(decrease, cost_gradient(problem, theta)), tuple(trace))


def _change_and_gradient(point: np.ndarray, problem: Problem, reference: np.ndarray):
    return cost_change(problem, reference, point), cost_gradient(problem, point)


_SOLVE = {"newton": _newton, "gradient": _gradient_descent, "lbfgs": _lbfgs}


def fit_result(standard: Problem, standardisation: Standardisation, theta: np.ndarray, path: Path, names: tuple[str, ...],
            *, solver: str, l2: float) -> FitResult:
    """Estimates and covariance carried from the standardised coordinates θ to the original b = T·θ."""
    transform = standardisation.matrix()
    curvature = cost_hessian(standard, theta) if path.curvature is None else path.curvature
    information = curvature * standard.total_weight
    covariance = transform @ solve_symmetric(information, np.eye(theta.size), standard, theta) @ transform.T
    covariance = (covariance + covariance.T) / 2
    beta = standardisation.to_original(theta)
    std_errors = np.sqrt(np.clip(np.diag(covariance), 0.0, None))
    z_values = np.divide(beta, std_errors, out=np.full_like(beta, np.nan), where=std_errors > 0)
    unpenalised = Problem(standard.design, standard.goods, standard.bads, np.zeros(theta.size), standard.intercept)
    fitted_log_likelihood = -cost(unpenalised, theta) * standard.total_weight
    deviance = -2.0 * fitted_log_likelihood
    return FitResult(
        names=names,
        coefficients=beta,
        std_errors=std_errors,
        z_values=z_values,
        p_values=2.0 * special.ndtr(-np.abs(z_values)),
        covariance=covariance,
        log_likelihood=fitted_log_likelihood,
        deviance=deviance,
        aic=deviance + 2 * beta.size,
        bic=deviance + beta.size * np.log(standard.total_weight),
        n_observations=standard.total_weight,
        iterations=path.iterations,
        converged=path.converged,
        cost_trace=path.cost_trace,
        solver=solver,
        l2=l2,
    )


def not_converged_message(result: FitResult) -> str:
    todo = (
        "Raise max_iterations; if that does not help, look for characteristics that nearly "
        "separate goods from bads."
        if result.solver == "newton"
        else "Raise max_iterations, or use solver='newton'."
    )
    return (
        f"the {result.solver} solver stopped after {result.iterations} iterations before the change "
        f"in cost and the gradient were within tolerance, so the estimates may be inaccurate. {todo}"
    )
