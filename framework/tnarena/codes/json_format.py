"""Code files: a plain JSON document describing one :class:`PauliCode`.

Format (version 1)::

    {
      "format": "tnarena-code",
      "version": 1,
      "name": "color/666/d3",
      "qubits": [[0.0, 0.0], [1.0, 0.0], ...],
      "generators": [
        {"kind": "stabilizer", "pauli": "XXIXIII", "position": [0.5, 0.8]},
        {"kind": "gauge", "pauli": {"0": "Z", "5": "Y"}},
        ...
      ],
      "logicals": [{"x": "XXXIIII", "z": {"0": "Z", "1": "Z", "2": "Z"}}],
      "distances": {"x": 3, "z": 3},
      "metadata": {"family": "color_666"}
    }

- ``qubits``: one ``[x, y]`` pair of finite numbers per qubit; n is its length
  and qubit i is the i-th pair.
- A Pauli is either a dense string of n letters from ``I X Y Z`` (capitals,
  letter i acts on qubit i) or a sparse object ``{"<qubit index>": "X" | "Y" |
  "Z" | "I"}`` listing only the qubits it acts on.
- ``generators``: stabilizer and gauge generators in order. ``kind`` is
  ``"stabilizer"`` or ``"gauge"`` (default ``"stabilizer"``); ``position`` is
  optional (default: centroid of the support).
- ``logicals``: one ``{"x": X-bar_i, "z": Z-bar_i}`` pair per logical qubit.
- ``distances`` (optional): non-negative integers by name, e.g. ``"x"``, ``"z"``.
- ``metadata`` (optional): any JSON object, kept as read.

Required keys: format, version, name, qubits, generators, logicals. Unknown or
repeated keys are refused, so a typo is reported rather than ignored. Writing
uses, for each Pauli, whichever form is shorter, and one list entry per line.
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

import numpy as np

from tnarena import pauli
from tnarena.codes.core import GENERATOR_KINDS, STABILIZER, PauliCode
from tnarena.errors import TnarenaError

FORMAT = "tnarena-code"
VERSION = 1
_REQUIRED = ("format", "version", "name", "qubits", "generators", "logicals")
_TOP_KEYS = _REQUIRED + ("distances", "metadata")
_GENERATOR_KEYS = ("kind", "pauli", "position")
_LOGICAL_KEYS = ("x", "z")
_LETTERS = "IXYZ"


# ---- writing -------------------------------------------------------------------------
def code_to_document(code: PauliCode) -> dict[str, Any]:
    """JSON-ready document (plain dicts, lists, str, int, float) describing ``code``."""
    generators = [
        {"kind": kind, "pauli": _pauli_entry(row), "position": _pair(pos)}
        for row, kind, pos in zip(code.generators, code.kinds, code.generator_positions)
    ]
    doc: dict[str, Any] = {
        "format": FORMAT,
        "version": VERSION,
        "name": code.name,
        "qubits": [_pair(p) for p in code.qubit_positions],
        "generators": generators,
        "logicals": [{"x": _pauli_entry(x), "z": _pauli_entry(z)} for x, z in code.logicals],
        "distances": {str(k): int(v) for k, v in code.distances.items()},
        "metadata": json.loads(_dumps(code.metadata, code.name)),
    }
    return doc


def write_code_json(code: PauliCode, path: str | Path) -> None:
    """Write ``code`` to ``path`` as a tnarena code file (one list entry per line)."""
    doc = code_to_document(code)
    lines = ["{"]
    for i, (key, value) in enumerate(doc.items()):
        comma = "," if i < len(doc) - 1 else ""
        if isinstance(value, list) and value:
            items = ",\n".join(f"    {_dumps(v, code.name)}" for v in value)
            lines.append(f'  "{key}": [\n{items}\n  ]{comma}')
        else:
            lines.append(f'  "{key}": {_dumps(value, code.name)}{comma}')
    lines.append("}")
    try:
        Path(path).write_text("\n".join(lines) + "\n", encoding="utf-8")
    except OSError as exc:
        raise TnarenaError(
            f"code file {str(path)!r} cannot be written ({exc.strerror}); check that its folder "
            "exists and is writable."
        ) from None


def _pauli_entry(row: np.ndarray) -> str | dict[str, str]:
    dense, sparse = pauli.to_string(row), pauli.to_sparse(row)
    return sparse if len(json.dumps(sparse)) < len(json.dumps(dense)) else dense


def _pair(xy: np.ndarray) -> list[float]:
    return [float(xy[0]), float(xy[1])]


def _dumps(value: Any, name: str) -> str:
    def plain(obj: Any) -> Any:
        if isinstance(obj, (np.ndarray, np.generic)):
            return obj.tolist()
        if isinstance(obj, tuple):
            return list(obj)
        raise TnarenaError(
            f"code {name!r} has metadata of type {type(obj).__name__}, which JSON cannot hold; "
            "use numbers, strings, lists and dicts."
        )

    return json.dumps(value, default=plain, allow_nan=False)


# ---- reading -------------------------------------------------------------------------
def read_code_json(path: str | Path) -> PauliCode:
    """Read a tnarena code file; errors name the file and what to fix."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise TnarenaError(f"code file {str(path)!r} does not exist; check the path.") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise TnarenaError(
            f"code file {str(path)!r} cannot be read ({exc}); give a readable UTF-8 text file."
        ) from None
    try:
        doc = json.loads(text, object_pairs_hook=_no_repeats)
    except json.JSONDecodeError as exc:
        raise TnarenaError(
            f"{path}: invalid JSON at line {exc.lineno}, column {exc.colno} ({exc.msg}); "
            "fix the syntax there."
        ) from None
    except _RepeatedKey as exc:
        raise TnarenaError(
            f"{path}: the key {exc.args[0]!r} appears twice in one object; keep one."
        ) from None
    return code_from_document(doc, source=str(path))


def code_from_document(doc: Any, source: str = "code document") -> PauliCode:
    """Build a :class:`PauliCode` from a parsed document; errors start with ``source``."""
    try:
        return _build(doc)
    except TnarenaError as exc:
        raise TnarenaError(f"{source}: {exc}") from exc


class _RepeatedKey(Exception):
    pass


def _no_repeats(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for key, value in pairs:
        if key in out:
            raise _RepeatedKey(key)
        out[key] = value
    return out


def _build(doc: Any) -> PauliCode:
    _check_object(doc, "the document", _TOP_KEYS)
    for key in _REQUIRED:
        if key not in doc:
            raise TnarenaError(f"the key {key!r} is missing; add it (see the tnarena code format).")
    if doc["format"] != FORMAT:
        raise TnarenaError(
            f"\"format\" is {doc['format']!r}; a tnarena code file has \"format\": \"{FORMAT}\"."
        )
    if doc["version"] != VERSION or isinstance(doc["version"], bool):
        raise TnarenaError(
            f"\"version\" is {doc['version']!r}; this tnarena reads version {VERSION}."
        )
    if not isinstance(doc["name"], str):
        raise TnarenaError(f"\"name\" is {doc['name']!r}; give a string.")
    qubits = np.array([_position(p, f"qubit {i}") for i, p in enumerate(_list(doc, "qubits"))])
    n = len(qubits)
    kinds, rows, positions = [], [], []
    for i, entry in enumerate(_list(doc, "generators")):
        what = f"generator {i}"
        _check_object(entry, what, _GENERATOR_KEYS)
        if "pauli" not in entry:
            raise TnarenaError(f"{what} has no 'pauli'; add a Pauli string or sparse map.")
        kind = entry.get("kind", STABILIZER)
        if kind not in GENERATOR_KINDS:
            raise TnarenaError(f"{what} has kind {kind!r}; use 'stabilizer' or 'gauge'.")
        kinds.append(kind)
        rows.append(_pauli(entry["pauli"], n, what))
        positions.append(_position(entry["position"], what) if "position" in entry else None)
    logicals = []
    for i, entry in enumerate(_list(doc, "logicals")):
        _check_object(entry, f"logical {i}", _LOGICAL_KEYS)
        pair = []
        for key in _LOGICAL_KEYS:
            if key not in entry:
                raise TnarenaError(f"logical {i} has no {key!r}; give both 'x' and 'z'.")
            pair.append(_pauli(entry[key], n, f"logical {i} {key!r}"))
        logicals.append(pair)
    gens = np.array(rows, dtype=np.uint8).reshape(-1, 2 * n)
    return PauliCode(
        name=doc["name"],
        qubit_positions=qubits.reshape(n, 2),
        generators=gens,
        kinds=tuple(kinds),
        logicals=np.array(logicals, dtype=np.uint8).reshape(-1, 2, 2 * n),
        generator_positions=_fill_positions(positions, gens, qubits.reshape(n, 2)),
        distances=_distances(doc.get("distances", {})),
        metadata=_metadata(doc.get("metadata", {})),
    )


def _check_object(value: Any, what: str, allowed: tuple[str, ...]) -> None:
    if not isinstance(value, dict):
        raise TnarenaError(f"{what} is {_json_type(value)}; give a JSON object {{...}}.")
    extra = [k for k in value if k not in allowed]
    if extra:
        raise TnarenaError(
            f"{what} has the unknown key {extra[0]!r}; allowed keys are {', '.join(allowed)}."
        )


def _list(doc: dict[str, Any], key: str) -> list[Any]:
    value = doc[key]
    if not isinstance(value, list):
        raise TnarenaError(f"{key!r} is {_json_type(value)}; give a JSON list [...].")
    return value


def _position(value: Any, what: str) -> tuple[float, float]:
    ok = isinstance(value, list) and len(value) == 2 and all(_is_number(v) for v in value)
    if not ok or not all(math.isfinite(v) for v in value):
        raise TnarenaError(f"{what} has position {value!r}; give a pair of finite numbers [x, y].")
    return float(value[0]), float(value[1])


def _pauli(value: Any, n: int, what: str) -> np.ndarray:
    if isinstance(value, str):
        bad = next((c for c in value if c not in _LETTERS), None)
        if bad is not None:
            raise TnarenaError(f"{what} has the letter {bad!r}; use I, X, Y, Z.")
        if len(value) != n:
            raise TnarenaError(
                f"{what} has {len(value)} letters for {n} qubits; give one letter per qubit."
            )
        return pauli.from_string(value)
    if isinstance(value, dict):
        for key, letter in value.items():
            key = str(key)
            if not (key.isascii() and key.isdigit()) or not int(key) < n:
                raise TnarenaError(f"{what} names qubit {key!r}; use qubit indices 0..{n - 1}.")
            if not isinstance(letter, str) or letter not in _LETTERS or len(letter) != 1:
                raise TnarenaError(f"{what} has {letter!r} on qubit {key}; use I, X, Y, Z.")
        return pauli.from_sparse(value, n)
    raise TnarenaError(
        f"{what} is {_json_type(value)}; "
        "give a Pauli string like \"XIZ\" or a map like {\"0\": \"X\"}."
    )


def _fill_positions(positions: list, gens: np.ndarray, qubits: np.ndarray) -> np.ndarray | None:
    if all(p is None for p in positions):
        return None
    n = qubits.shape[0]
    out = np.zeros((len(positions), 2))
    for i, p in enumerate(positions):
        if p is not None:
            out[i] = p
        else:
            sup = np.flatnonzero(gens[i, :n] | gens[i, n:])
            out[i] = qubits[sup].mean(axis=0) if sup.size else 0.0
    return out


def _distances(value: Any) -> dict[str, int]:
    if not isinstance(value, dict):
        raise TnarenaError(
            f"\"distances\" is {_json_type(value)}; give an object like {{\"x\": 3, \"z\": 3}}."
        )
    for key, d in value.items():
        if isinstance(d, bool) or not isinstance(d, int) or d < 0:
            raise TnarenaError(f"distance {key!r} is {d!r}; give a non-negative integer.")
    return dict(value)


def _metadata(value: Any) -> dict[str, Any]:
    if not isinstance(value, dict):
        raise TnarenaError(f"\"metadata\" is {_json_type(value)}; give a JSON object {{...}}.")
    return value


def _is_number(value: Any) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool)


def _json_type(value: Any) -> str:
    names = {
        dict: "an object", list: "a list", str: "a string", bool: "a boolean",
        int: "a number", float: "a number", type(None): "null",
    }
    return names.get(type(value), f"a {type(value).__name__}")
