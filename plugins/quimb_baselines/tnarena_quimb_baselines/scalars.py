"""Reading quimb's results: ``(mantissa, exponent)`` pairs to natural logs, and exact zeros.

quimb's ``strip_exponent=True`` returns a value as a mantissa and a base-10
exponent (the norms it divided out along the way). When a tensor of the
network quimb is working on is all zero, the value that network stands for
is exactly zero, but equalizing norms then divides 0 by 0 and the NaN
surfaces later (as a NaN mantissa, or as an error from an SVD fed NaNs).
The inputs are finite and norms are equalized at every step, so a NaN can
come from nowhere else: :func:`run_or_zero` reads it as the value 0.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable
from typing import Any

import numpy as np

from tnarena.errors import PluginError

LN10 = math.log(10.0)


class ZeroReached(Exception):
    """Raised (by a callback) when quimb has made an all-zero tensor: the value is 0."""


def check_finite(tensor) -> None:
    """Raise ZeroReached when a quimb tensor holds a NaN (an all-zero tensor divided by its norm)."""
    if not np.isfinite(tensor.data).all():
        raise ZeroReached


def run_or_zero(run: Callable[[], Any]) -> Any | None:
    """``run()``, or None when quimb met an all-zero tensor on the way (see the module docstring)."""
    with np.errstate(invalid="ignore", divide="ignore"), warnings.catch_warnings():
        warnings.filterwarnings("ignore", message=".*infs or NaNs.*")
        try:
            return run()
        except ZeroReached:
            return None
        except (np.linalg.LinAlgError, ValueError) as exc:
            if "nan" in str(exc).lower():
                return None
            raise


def log_of_stripped(mantissa, exponent: float, *, strategy: str) -> float:
    """Natural log of ``|mantissa| * 10**exponent``; ``-inf`` for an exact zero.

    Parameters
    ----------
    mantissa : scalar (numpy or Python), real or complex; 0 or NaN for a zero value
    exponent : float, log10 of the factor taken out; -inf or NaN for a zero value
    strategy : name used in the error when quimb returns something else

    Returns
    -------
    float, natural log
    """
    value = abs(complex(mantissa))
    exponent = float(exponent)
    if value == 0.0 or math.isnan(value) or math.isnan(exponent) or exponent == -math.inf:
        return -math.inf
    if not (math.isfinite(value) and math.isfinite(exponent)):
        raise PluginError(
            f"strategy {strategy!r}: quimb returned mantissa {mantissa!r} and exponent {exponent!r}, "
            "which is not a finite value; report it with the network that caused it."
        )
    return math.log(value) + exponent * LN10
