"""A test-only strategy plugin that misbehaves on purpose, chosen by the network's numbers.

For each network, a digest of its arrays picks one behaviour: raise, sleep far
past any time limit, allocate 2 GiB, or return ln(value) = 0. The choice
depends only on the arrays, so it is the same in every worker and every run.
"""

import hashlib
import time

import numpy as np

import tnarena
from tnarena.strategy import Estimate, Strategy

SLEEP_SECONDS = 120.0


def behaviour(network) -> str:
    digest = hashlib.sha256(b"".join(np.ascontiguousarray(a).tobytes() for a in network.arrays)).digest()
    return ("raise", "sleep", "hog", "fine", "fine", "fine")[digest[0] % 6]


class Flaky(Strategy):
    name = "flaky"
    summary = "test strategy: raises, hangs or exhausts memory on some networks"

    def plan(self, structure, params):
        return "no plan needed"

    def contract(self, plan, network):
        what = behaviour(network)
        if what == "raise":
            raise RuntimeError("flaky strategy refuses this network")
        if what == "sleep":
            time.sleep(SLEEP_SECONDS)
        if what == "hog":
            block = np.ones(2**28)  # 2 GiB of float64: over the study's memory limit
            return Estimate(float(block[0]) - 1.0)
        return Estimate(0.0)


class Sleepy(Strategy):
    name = "sleepy"
    summary = "test strategy: never finishes in time"

    def plan(self, structure, params):
        return "no plan needed"

    def contract(self, plan, network):
        time.sleep(SLEEP_SECONDS)
        return Estimate(0.0)


@tnarena.hookimpl
def tnarena_register_strategies(register):
    register(Flaky())
    register(Sleepy())
