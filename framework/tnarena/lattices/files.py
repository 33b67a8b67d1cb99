"""Lattice files: a small JSON document of our own design.

Format (version 1)::

    {"format": "tnarena-lattice", "version": 1, "name": "my lattice",
     "positions": [[x, y], ...], "edges": [[u, v], ...]}

``positions`` are vertex coordinates (any units); ``edges`` are pairs of
0-based vertex indices. Faces are not stored: they are traced from the
straight-line drawing when the file is read, so the drawing must be planar
and connected.
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

import numpy as np

from tnarena.errors import TnarenaError
from tnarena.lattices.core import Lattice

FORMAT = "tnarena-lattice"
VERSION = 1
_KEYS = ("format", "version", "name", "positions", "edges")


def write_lattice_file(lattice: Lattice, path: str | Path) -> None:
    """Write a lattice as a version-1 lattice file (floats written exactly)."""
    doc = {
        "format": FORMAT,
        "version": VERSION,
        "name": lattice.name,
        "positions": [[float(x), float(y)] for x, y in lattice.positions],
        "edges": [[int(u), int(v)] for u, v in lattice.edges],
    }
    Path(path).write_text(json.dumps(doc) + "\n", encoding="utf-8")


def read_lattice_file(path: str | Path) -> Lattice:
    """Read a lattice file and trace its faces.

    Raises TnarenaError, naming the file, for a file that cannot be read, is
    not JSON, lacks a key, holds a bad value, or draws crossing edges.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as err:
        raise TnarenaError(f"cannot read lattice file {path} ({err}); check the path.") from None
    try:
        doc = json.loads(text)
    except json.JSONDecodeError as err:
        raise TnarenaError(
            f"lattice file {path} is not valid JSON ({err.msg} at line {err.lineno}, "
            f"column {err.colno}); fix the syntax there."
        ) from None
    name, positions, edges = _parse(doc, path)
    try:
        return Lattice.from_graph(name, positions, edges)
    except TnarenaError as err:
        raise TnarenaError(f"lattice file {path}: {err}") from None


def _parse(doc: Any, path: Path) -> tuple[str, np.ndarray, np.ndarray]:
    """Check a decoded document and return (name, positions (V, 2), edges (E, 2))."""
    where = f"lattice file {path}"
    if not isinstance(doc, dict):
        raise TnarenaError(f"{where} must hold a JSON object, not {type(doc).__name__}.")
    missing = [k for k in _KEYS if k not in doc]
    if missing:
        raise TnarenaError(f"{where} lacks the key(s) {', '.join(missing)}; add them.")
    if doc["format"] != FORMAT:
        raise TnarenaError(f"{where} has format {doc['format']!r}; write {FORMAT!r}.")
    if doc["version"] != VERSION:
        raise TnarenaError(
            f"{where} has version {doc['version']!r}; this tnarena reads version {VERSION}."
        )
    if not isinstance(doc["name"], str) or not doc["name"]:
        raise TnarenaError(f"{where}: name {doc['name']!r} is not a non-empty string; give one.")
    positions, edges = doc["positions"], doc["edges"]
    _check_items(positions, _is_point, f"{where}: position", "two finite numbers; write [x, y]")
    _check_items(edges, _is_pair, f"{where}: edge", "two integers; write [u, v]")
    n = len(positions)
    for u, v in edges:
        if not (0 <= u < n and 0 <= v < n):
            raise TnarenaError(
                f"{where}: edge [{u}, {v}] names a vertex outside 0..{n - 1}; "
                "use indices into positions."
            )
    return (
        doc["name"],
        np.array(positions, float).reshape(-1, 2),
        np.array(edges, np.int64).reshape(-1, 2),
    )


def _check_items(items: Any, ok: Any, what: str, should_be: str) -> None:
    """Raise TnarenaError unless ``items`` is a list whose entries all pass ``ok``."""
    if not isinstance(items, list):
        raise TnarenaError(f"{what} list {items!r} is not a JSON list; write a list of pairs.")
    for x in items:
        if not ok(x):
            raise TnarenaError(f"{what} {x!r} is not {should_be}.")


def _is_number(x: Any) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x)


def _is_int(x: Any) -> bool:
    return isinstance(x, int) and not isinstance(x, bool)


def _is_point(p: Any) -> bool:
    return isinstance(p, list) and len(p) == 2 and all(_is_number(x) for x in p)


def _is_pair(e: Any) -> bool:
    return isinstance(e, list) and len(e) == 2 and all(_is_int(x) for x in e)
