"""Code files: round trips, the shipped data files, and one clear message per mistake.

Expected codes are written out by hand in this file (symplectic rows ``[x | z]``).
"""

from __future__ import annotations

import json
from itertools import permutations
from pathlib import Path

import numpy as np
import pytest

from tnarena.codes.color import color_666
from tnarena.codes.core import GAUGE, STABILIZER, PauliCode
from tnarena.codes.json_format import (
    code_from_document,
    code_to_document,
    read_code_json,
    write_code_json,
)
from tnarena.errors import TnarenaError

DATA = Path(__file__).parent / "data"


def _row(x: str, z: str) -> list[int]:
    """Symplectic row from two bit strings, e.g. _row("110", "000")."""
    return [int(c) for c in x + z]


def _five_qubit_code() -> PauliCode:
    """[[5,1,3]] code: cyclic shifts of XZZXI, X-bar = XXXXX, Z-bar = ZZZZZ (common practice)."""
    rows = [
        _row("10010", "01100"),  # X Z Z X I
        _row("01001", "00110"),  # I X Z Z X
        _row("10100", "00011"),  # X I X Z Z
        _row("01010", "10001"),  # Z X I X Z
    ]
    return PauliCode(
        name="five-qubit",
        qubit_positions=[[0.0, 0.0], [1.0, 0.25], [0.5, 1.0], [-0.5, 1.0], [-1.0 / 3.0, 0.25]],
        generators=rows,
        kinds=(STABILIZER,) * 4,
        logicals=[[_row("11111", "00000"), _row("00000", "11111")]],
        generator_positions=[[0.1, 0.2], [0.3, 0.4], [0.5, 0.6], [0.7, 0.8]],
        distances={"min": 3},
        metadata={"note": "perfect code", "cyclic": True},
    )


def _bacon_shor_2x2() -> PauliCode:
    """2x2 Bacon-Shor: gauge Z0Z1, Z2Z3, X0X2, X1X3; stabilizers XXXX, ZZZZ (common practice)."""
    rows = [
        _row("0000", "1100"),
        _row("0000", "0011"),
        _row("1010", "0000"),
        _row("0101", "0000"),
        _row("1111", "0000"),
        _row("0000", "1111"),
    ]
    return PauliCode(
        name="bacon-shor/2x2",
        qubit_positions=[[0, 0], [1, 0], [0, 1], [1, 1]],
        generators=rows,
        kinds=(GAUGE,) * 4 + (STABILIZER,) * 2,
        logicals=[[_row("1100", "0000"), _row("0000", "1010")]],
    )


def _assert_same(a: PauliCode, b: PauliCode) -> None:
    assert a.name == b.name
    np.testing.assert_array_equal(a.qubit_positions, b.qubit_positions)
    np.testing.assert_array_equal(a.generators, b.generators)
    assert a.kinds == b.kinds
    np.testing.assert_array_equal(a.logicals, b.logicals)
    np.testing.assert_array_equal(a.generator_positions, b.generator_positions)
    assert a.distances == b.distances
    assert a.metadata == b.metadata


@pytest.mark.parametrize("make", [lambda: color_666(3), lambda: color_666(5), _five_qubit_code,
                                  _bacon_shor_2x2])
def test_round_trip_through_a_file_keeps_every_field(make, tmp_path):
    """write then read gives back the same code, field by field (exact float repr)."""
    code = make()
    path = tmp_path / "code.json"
    write_code_json(code, path)
    _assert_same(read_code_json(path), code)


def test_round_trip_through_a_document_keeps_every_field():
    """code_to_document then code_from_document is the identity; the document is plain JSON."""
    code = _five_qubit_code()
    doc = code_to_document(code)
    assert json.loads(json.dumps(doc)) == doc
    _assert_same(code_from_document(doc), code)


@pytest.mark.parametrize(("d", "form"), [(3, str), (11, dict)])
def test_writer_picks_the_shorter_pauli_form(d, form):
    """Each written Pauli is the shorter of its dense string and sparse map, both built
    here from the symplectic row (format rule): d=3 (n=7) all dense, d=11 (n=91) all sparse."""
    code = color_666(d)
    n = code.n
    letters = {(0, 0): "I", (1, 0): "X", (1, 1): "Y", (0, 1): "Z"}
    forms = set()
    for row, entry in zip(code.generators, code_to_document(code)["generators"]):
        dense = "".join(letters[int(row[q]), int(row[n + q])] for q in range(n))
        sparse = {str(q): dense[q] for q in range(n) if dense[q] != "I"}
        shorter = sparse if len(json.dumps(sparse)) < len(json.dumps(dense)) else dense
        assert entry["pauli"] == shorter
        forms.add(type(shorter))
    assert forms == {form}


def test_repetition3_file():
    """repetition3.json: stabilizers Z0Z1, Z1Z2; X-bar = XXX, Z-bar = Z0 (written by hand)."""
    code = read_code_json(DATA / "repetition3.json")
    assert (code.n, code.k) == (3, 1)
    np.testing.assert_array_equal(code.generators, [_row("000", "110"), _row("000", "011")])
    np.testing.assert_array_equal(code.logicals, [[_row("111", "000"), _row("000", "100")]])
    assert code.kinds == (STABILIZER, STABILIZER)


def test_repetition5_file_uses_sparse_maps_and_default_positions():
    """repetition5.json (sparse form, no positions): Z_i Z_(i+1), generators at midpoints."""
    code = read_code_json(DATA / "repetition5.json")
    assert (code.n, code.k) == (5, 1)
    expected = [_row("00000", "11000"), _row("00000", "01100"), _row("00000", "00110"),
                _row("00000", "00011")]
    np.testing.assert_array_equal(code.generators, expected)
    np.testing.assert_array_equal(code.logicals, [[_row("11111", "00000"), _row("00000", "10000")]])
    np.testing.assert_allclose(code.generator_positions, [[0.5, 0], [1.5, 0], [2.5, 0], [3.5, 0]])


def test_steane_file_equals_the_distance_three_color_code_up_to_relabelling():
    """steane.json (Hamming parity checks, written by hand) and color_666(3) have the same
    X-check and Z-check spaces under one of the 7! qubit permutations, found by search
    here: both are the [[7,1,3]] Steane code (common practice)."""
    steane, color = read_code_json(DATA / "steane.json"), color_666(3)
    assert (steane.n, steane.k) == (7, 1)

    def span(rows: np.ndarray) -> set[tuple[int, ...]]:
        words = {(0,) * 7}
        for r in rows:
            words |= {tuple(np.bitwise_xor(w, r)) for w in words}
        return words

    def checks(code: PauliCode, half: slice) -> np.ndarray:
        part = code.generators[:, half].astype(int)
        return part[part.any(axis=1)]

    x_target = span(checks(steane, slice(0, 7)))
    z_target = span(checks(steane, slice(7, 14)))
    x_rows, z_rows = checks(color, slice(0, 7)), checks(color, slice(7, 14))
    matches = [
        perm
        for perm in permutations(range(7))
        if span(x_rows[:, perm]) == x_target and span(z_rows[:, perm]) == z_target
    ]
    assert len(x_target) == 8 and matches


def _write(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "code.json"
    path.write_text(text, encoding="utf-8")
    return path


def _doc(**changes) -> dict:
    doc = {
        "format": "tnarena-code",
        "version": 1,
        "name": "rep3",
        "qubits": [[0, 0], [1, 0], [2, 0]],
        "generators": [{"pauli": "ZZI"}, {"pauli": "IZZ"}],
        "logicals": [{"x": "XXX", "z": "ZII"}],
    }
    doc.update(changes)
    return {k: v for k, v in doc.items() if v is not _DROP}


_DROP = object()


def test_a_valid_hand_document_reads():
    """The baseline document used by the error tests is itself valid (control case)."""
    code = code_from_document(_doc())
    assert (code.n, code.k) == (3, 1)


def test_missing_file(tmp_path):
    """A path that does not exist is named (project error rule)."""
    with pytest.raises(TnarenaError, match=r"code file '.*nothere\.json' does not exist; check"):
        read_code_json(tmp_path / "nothere.json")


def test_invalid_json_names_line_and_column(tmp_path):
    """Syntax errors give line and column from json.JSONDecodeError (3, 13 counted by hand)."""
    path = _write(tmp_path, '{\n  "format": "tnarena-code",\n  "version" 1\n}\n')
    with pytest.raises(TnarenaError, match=r"code\.json: invalid JSON at line 3, column 13"):
        read_code_json(path)


def test_repeated_key(tmp_path):
    """A key given twice is refused rather than silently overwritten (format rule)."""
    path = _write(tmp_path, '{"format": "tnarena-code", "format": "x"}')
    with pytest.raises(TnarenaError, match=r"the key 'format' appears twice"):
        read_code_json(path)


def test_document_that_is_not_an_object(tmp_path):
    """The top level must be a JSON object (format rule)."""
    path = _write(tmp_path, "[1, 2]")
    message = r"code\.json: the document is a list; give a JSON object"
    with pytest.raises(TnarenaError, match=message):
        read_code_json(path)


def test_wrong_format_value(tmp_path):
    """The "format" marker must be "tnarena-code" (format rule)."""
    path = _write(tmp_path, json.dumps(_doc(format="surface")))
    message = r'code\.json: "format" is \'surface\'; a tnarena code file'
    with pytest.raises(TnarenaError, match=message):
        read_code_json(path)


def test_wrong_version():
    """Only version 1 exists (format rule)."""
    with pytest.raises(TnarenaError, match=r'"version" is 2; this tnarena reads version 1'):
        code_from_document(_doc(version=2))


@pytest.mark.parametrize("key", ["name", "qubits", "generators", "logicals", "version"])
def test_missing_key(key):
    """Each required key, when dropped, is named (format rule)."""
    with pytest.raises(TnarenaError, match=rf"the key '{key}' is missing; add it"):
        code_from_document(_doc(**{key: _DROP}))


def test_unknown_key():
    """A misspelt key is reported, not ignored (format rule)."""
    with pytest.raises(TnarenaError, match=r"the document has the unknown key 'logical'"):
        code_from_document(_doc(logical=[]))


@pytest.mark.parametrize(
    ("changes", "message"),
    [
        ({"qubits": {"0": [0, 0]}}, r"'qubits' is an object; give a JSON list"),
        ({"generators": "ZZI"}, r"'generators' is a string; give a JSON list"),
        ({"generators": ["ZZI"]}, r"generator 0 is a string; give a JSON object"),
        ({"name": 7}, r'"name" is 7; give a string'),
        ({"generators": [{"pauli": "ZZI", "kind": "stab"}]}, r"generator 0 has kind 'stab'; use"),
        ({"generators": [{"kind": "gauge"}]}, r"generator 0 has no 'pauli'"),
        ({"generators": [{"pauli": 5}]}, r"generator 0 is a number; give a Pauli string"),
        ({"logicals": [{"x": "XXX"}]}, r"logical 0 has no 'z'; give both"),
        ({"distances": {"x": 2.5}}, r"distance 'x' is 2.5; give a non-negative integer"),
        ({"distances": [3, 1]}, r'"distances" is a list; give an object'),
        ({"metadata": "hi"}, r'"metadata" is a string; give a JSON object'),
    ],
)
def test_wrong_types(changes, message):
    """A value of the wrong JSON type is named with the fix (format rule)."""
    with pytest.raises(TnarenaError, match=message):
        code_from_document(_doc(**changes), source="my.json")


@pytest.mark.parametrize(
    ("pauli", "message"),
    [
        ("ZZQ", r"my\.json: generator 1 has the letter 'Q'; use I, X, Y, Z"),
        ("zzi", r"generator 1 has the letter 'z'; use I, X, Y, Z"),
        ("ZZ", r"generator 1 has 2 letters for 3 qubits; give one letter per qubit"),
        ("IZZI", r"generator 1 has 4 letters for 3 qubits"),
        ({"3": "Z"}, r"generator 1 names qubit '3'; use qubit indices 0\.\.2"),
        ({"a": "Z"}, r"generator 1 names qubit 'a'"),
        ({"1": "W"}, r"generator 1 has 'W' on qubit 1; use I, X, Y, Z"),
    ],
)
def test_bad_pauli(pauli, message):
    """Bad letters, wrong lengths and bad sparse indices are named (format rule)."""
    doc = _doc(generators=[{"pauli": "ZZI"}, {"pauli": pauli}])
    with pytest.raises(TnarenaError, match=message):
        code_from_document(doc, source="my.json")


@pytest.mark.parametrize(
    "position", [[1], [1, 2, 3], [1, "a"], [True, 0], "0,0", [float("nan"), 0]]
)
def test_bad_positions(position):
    """Positions must be pairs of finite numbers, for qubits and generators (format rule)."""
    with pytest.raises(TnarenaError, match=r"has position .*; give a pair of finite numbers"):
        code_from_document(_doc(qubits=[[0, 0], position, [2, 0]]))
    with pytest.raises(TnarenaError, match=r"generator 0 has position"):
        code_from_document(_doc(generators=[{"pauli": "ZZI", "position": position},
                                            {"pauli": "IZZ"}]))


def test_non_commuting_stabilizers_are_refused_with_the_code_message(tmp_path):
    """X0 and Z0 anticommute: PauliCode's own validation message comes through."""
    doc = _doc(generators=[{"pauli": "XII"}, {"pauli": "ZII"}], logicals=[])
    path = _write(tmp_path, json.dumps(doc))
    with pytest.raises(
        TnarenaError,
        match=r"code\.json: stabilizer generator 0 does not commute with stabilizer generator 1",
    ):
        read_code_json(path)


def test_wrong_number_of_logicals_is_refused_with_the_code_message():
    """k = n - rank = 3 - 2 = 1 but no logical given: PauliCode refuses (common practice)."""
    with pytest.raises(TnarenaError, match=r"my\.json: the code has k = n - rank = 1 logical"):
        code_from_document(_doc(logicals=[]), source="my.json")


def test_unwritable_path(tmp_path):
    """Writing into a folder that does not exist is a clear error (project error rule)."""
    with pytest.raises(TnarenaError, match=r"cannot be written .*check that its folder exists"):
        write_code_json(color_666(3), tmp_path / "missing" / "code.json")
