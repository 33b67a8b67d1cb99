"""Where a contraction's time goes: a sampling profiler that sorts samples into three bins.

A background thread looks at the main thread's stack every ``interval`` seconds
(``sys._current_frames``) and files the sample under

- ``decompositions``: any frame in numpy.linalg or scipy.linalg, or an innermost line
  that calls one directly (svd, qr, LAPACK's gesdd, geqrf, ...);
- ``products``: any frame in numpy's einsum/tensordot/dot code, or an innermost
  strategy line that multiplies (``@``, ``matmul``, ``einsum``, ``tensordot``, ``dot(``);
  ufunc calls such as ``a @ b`` have no Python frame of their own, so the line that
  issues them is what tells;
- ``python``: everything else: the interpreter and bookkeeping, and element-wise numpy
  work (normalising, transposing, copying).

Calls dispatched through autoray (``do("tensordot", ...)``, as cotengra contracts)
are sorted by the function name they dispatch.

It is statistical (a sample lands where the main thread is when the sampler gets
the GIL) and costs little: nothing runs in the profiled thread. Planning is timed
apart by the arena, so the three bins split the contraction only.
"""

from __future__ import annotations

import linecache
import os
import sys
import threading
import time
from types import FrameType

#: Seconds between samples (the interpreter's switch interval is lowered to match while sampling).
INTERVAL = 0.001
_LINALG = (os.sep + os.path.join("numpy", "linalg") + os.sep, os.sep + os.path.join("scipy", "linalg") + os.sep)
_PRODUCT_FILES = ("einsumfunc.py", "numeric.py", "_einsum", "contract.py")
_PRODUCT_WORDS = ("@", "matmul", "einsum", "tensordot", "dot(")
_DECOMPOSITION_WORDS = ("svd", "qr(", "gesdd", "gesvd", "geqrf", "orgqr", "eigh", "lapack")
BINS = ("products", "decompositions", "python")


def classify(frame: FrameType | None) -> str:
    """The bin of one sample: the main thread's innermost frame and its callers."""
    innermost = frame
    while frame is not None:
        name = frame.f_code.co_filename
        if any(part in name for part in _LINALG):
            return "decompositions"
        if os.sep + "numpy" + os.sep in name and name.endswith(_PRODUCT_FILES):
            return "products"
        if frame.f_code.co_name == "do" and "autoray" in name:  # do("tensordot", ...): the name says
            return _by_words(str(frame.f_locals.get("fn", "")) + "(")
        frame = frame.f_back
    if innermost is None:
        return "python"
    return _by_words(linecache.getline(innermost.f_code.co_filename, innermost.f_lineno))


def _by_words(text: str) -> str:
    if any(word in text for word in _DECOMPOSITION_WORDS):
        return "decompositions"
    if any(word in text for word in _PRODUCT_WORDS):
        return "products"
    return "python"


class Sampler:
    """``with Sampler() as s: work()``; then ``s.counts`` (samples per bin) and ``s.fractions()``."""

    def __init__(self, interval: float = INTERVAL) -> None:
        self.interval = interval
        self.counts = dict.fromkeys(BINS, 0)
        self._target = threading.get_ident()
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._run, daemon=True)

    def __enter__(self) -> "Sampler":
        self._switch = sys.getswitchinterval()
        sys.setswitchinterval(self.interval)
        self._thread.start()
        return self

    def __exit__(self, *exc) -> None:
        self._stop.set()
        self._thread.join()
        sys.setswitchinterval(self._switch)

    def _run(self) -> None:
        while not self._stop.is_set():
            frame = sys._current_frames().get(self._target)
            self.counts[classify(frame)] += 1
            del frame
            time.sleep(self.interval)

    def fractions(self) -> dict[str, float]:
        total = sum(self.counts.values())
        return {k: (v / total if total else 0.0) for k, v in self.counts.items()}
