"""Choosing a strategy setting per code automatically, with the evidence behind the choice.

``choose(code, noise_table, catalog, target, budget, seed)`` returns a
:class:`Choice`: the strategy name and parameters to decode with, and every
candidate tried on the seeded calibration instances (time per decode, error
against the reference, decision agreement, largest intermediate). Modules:
``cost`` (structure-only figures, directions), ``measure`` (one setting on the
instances), ``calibrate`` (the search and the rule), ``evidence`` (tables),
``persist`` (the ``choices`` table of an SQLite file).
"""

from tnarena.chooser.calibrate import DEFAULT_STRATEGIES, calibration_errors, chi_ladder, choose, select
from tnarena.chooser.cost import line_crossings, rank_directions
from tnarena.chooser.evidence import report
from tnarena.chooser.model import Budget, Candidate, Choice, Target, setting_label
from tnarena.chooser.persist import ChoiceStore

__all__ = ["Budget", "Candidate", "Choice", "ChoiceStore", "DEFAULT_STRATEGIES", "Target", "calibration_errors",
           "chi_ladder", "choose", "line_crossings", "rank_directions", "report", "select", "setting_label"]
