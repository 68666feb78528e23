"""Many cases: scenario files, parallel sweeps into a resumable store, fits, validation."""

from ._fits import FitResult, fit_rows, fit_scaling
from ._scenario import Case, Scenario, load_scenario, parse_scenario
from ._store import ResultStore
from ._sweep import run_cases

__all__ = sorted([
    "Case", "FitResult", "ResultStore", "Scenario", "fit_rows", "fit_scaling", "load_scenario",
    "parse_scenario", "run_cases",
])
