"""Thresholds from logical failure counts: Wilson rates, crossings, scaling fit, bootstrap, plots.

Input everywhere is a (size, rate) grid of plain count arrays
(:mod:`tnarena.thresholds.data`), so it can be filled from an arena database
or any other source. Plots need matplotlib and are imported on use
(:mod:`tnarena.thresholds.plots`).
"""

from tnarena.thresholds.bootstrap import ThresholdEstimate, estimate_threshold
from tnarena.thresholds.convergence import ChiStep, chi_convergence, chi_table
from tnarena.thresholds.crossings import Crossing, pairwise_crossings
from tnarena.thresholds.data import CurvePoint, FailureGrid, failure_rates
from tnarena.thresholds.scaling import ScalingFit, fit_scaling

__all__ = ["ChiStep", "Crossing", "CurvePoint", "FailureGrid", "ScalingFit", "ThresholdEstimate",
           "chi_convergence", "chi_table", "estimate_threshold", "failure_rates", "fit_scaling",
           "pairwise_crossings"]
