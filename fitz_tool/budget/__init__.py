"""Uncertainty budget of a fit (GUM): stated instrument, shunt and fixture limits plus the noise.

``inputs`` (the type B input quantities), ``combination`` (sensitivities, u_c, nu_eff, U) and
``montecarlo`` (the JCGM 101 check). A budget is a view on a fit: nothing here changes the fit.
"""

from .combination import (
                          COVERAGE_PROBABILITY,
                          Budget,
                          BudgetEntry,
                          Contribution,
                          MonteCarloCheck,
                          coverage_factor,
                          uncertainty_budget,
)
from .inputs import AccuracyTable, BudgetInputs, Source, read_accuracy_table

__all__ = ["AccuracyTable", "BudgetInputs", "Source", "read_accuracy_table", "Budget", "BudgetEntry",
           "Contribution", "MonteCarloCheck", "uncertainty_budget", "coverage_factor",
           "COVERAGE_PROBABILITY"]
