"""Tests of scorecard/rows/keys.py: canonical texts, row texts and the MD5 split key.

The vectorised MD5 is checked against Python's hashlib (the standard library's MD5, RFC 1321);
the canonical texts against values worked by hand from the rules in the module's docstring.
"""

from __future__ import annotations

import datetime
import hashlib

import numpy as np
import pandas as pd
import pyarrow as pa
import pytest

from scorecard.rows.keys import canonical_text, canonical_texts, float_texts, md5_keys, repeat_keys, row_texts, split_keys


def _hashlib_key(text: str) -> int:
    return int(hashlib.md5(text.encode("utf-8")).hexdigest()[:15], 16)


def test_md5_keys_equal_hashlib_for_texts_of_every_length_and_script():
    rng = np.random.default_rng(0)
    # lengths around the one- and two-block edges (55/56 and 119/120 bytes) and multi-byte UTF-8
    texts = ["", "a", "naïve", "東京", "🙂", "e\u0301", "x" * 55, "x" * 56, "é" * 28, "y" * 119, "y" * 120, "z" * 1000]
    texts += [str(v) for v in rng.integers(0, 10**12, 300)] + ["é" * int(n) for n in rng.integers(0, 80, 100)]
    keys = md5_keys(pa.array(texts))
    assert keys.tolist() == [_hashlib_key(t) for t in texts]
    assert keys.dtype == np.int64 and (keys >= 0).all() and (keys < 2**60).all()
    assert md5_keys(pa.array(texts)[5:]).tolist() == [_hashlib_key(t) for t in texts[5:]]  # a slice, offset kept


def test_float_texts_follow_the_rule():
    values = [1.0, 3.0, -0.0, 0.1, 1e23, 5e-324, np.inf, -np.inf, np.nan, -2.5, 2.0**63, 2.0**62]
    # hand-worked: 0.1 = 7205759403792794 · 2**-56 (its nearest double); 2**63 is too large for a
    # 64-bit integer, so it takes the binary form 2**52 · 2**11; -2.5 = -5629499534213120 · 2**-51
    assert float_texts(np.array(values)).to_pylist() == [
        "1", "3", "0", "7205759403792794p-56", "5960464477539062p24", "1p-1074", "inf", "-inf", None,
        "-5629499534213120p-51", "4503599627370496p11", "4611686018427387904",
    ]
    for value in (0.1, 1e23, 5e-324, -2.5):  # the binary form is exact
        text = float_texts(np.array([value]))[0].as_py()
        mantissa, exponent = text.split("p")
        assert float(int(mantissa)) * 2.0 ** int(exponent) == value


def test_canonical_texts_by_type():
    frame = pd.DataFrame({
        "whole": pd.Series([7, -42, 0], dtype="int64"),
        "nullable": pd.Series([7, None, 0], dtype="Int64"),
        "floats": [7.0, np.nan, 0.5],
        "text": ["A-1", None, " x "],
        "flag": [True, False, True],
        "day": [datetime.date(2024, 1, 31), None, datetime.date(1999, 12, 1)],
        "stamp": pd.to_datetime(["1970-01-01 00:00:01", None, "2024-01-01 00:00:00"]),
    })
    texts = {name: canonical_texts(frame[name]).to_pylist() for name in frame.columns}
    assert texts == {
        "whole": ["7", "-42", "0"], "nullable": ["7", None, "0"], "floats": ["7", None, "4503599627370496p-53"],
        "text": ["A-1", None, " x "], "flag": ["true", "false", "true"], "day": ["2024-01-31", None, "1999-12-01"],
        # microseconds since 1970-01-01: one second is 1,000,000; 2024-01-01 is 19723 days on (hand-worked)
        "stamp": ["1000000", None, str(19723 * 86_400 * 10**6)],
    }
    assert canonical_texts(pd.Series([1, "b", 2.5, None], dtype=object)).to_pylist() == ["1", "b", "5629499534213120p-51", None]
    assert canonical_text(True) == "true" and canonical_text(np.int64(3)) == "3" and canonical_text(None) is None


def test_an_integer_column_read_as_floats_gives_the_same_texts():
    ints = pd.Series([1, -5, 2**53 + 1, 0])
    assert canonical_texts(ints.astype(float)).to_pylist()[:2] == canonical_texts(ints).to_pylist()[:2]
    assert canonical_texts(pd.Series(["x", "y"], dtype="category")).to_pylist() == ["x", "y"]


def test_row_texts_sort_the_columns_and_mark_lengths_and_missing_values():
    frame = pd.DataFrame({"b": ["é", None], "a": [10, 2]})
    # per column in name order: '<bytes>:<text>' or '-', joined by '|' ('é' is two bytes in UTF-8)
    assert row_texts(frame, ["b", "a"]).to_pylist() == ["2:10|2:é", "1:2|-"]
    assert row_texts(frame[["a"]], ["a"]).to_pylist() == ["2:10", "1:2"]


def test_split_keys_hash_the_seeded_row_text():
    frame = pd.DataFrame({"id": ["A1", "B2"]})
    keys = split_keys(frame, ["id"], 20260101)
    assert keys.tolist() == [_hashlib_key("20260101:2:A1"), _hashlib_key("20260101:2:B2")]
    assert split_keys(frame, ["id"], 7).tolist() != keys.tolist()


def test_the_repeats_of_a_row_take_the_key_of_the_key_and_their_number():
    frame = pd.DataFrame({"a": [1, 2, 1, 1], "b": ["x", "y", "x", "x"]})
    keys = split_keys(frame, ["a", "b"], 5)
    asked = []

    def twins(rows):
        asked.append(rows.tolist())
        return split_keys(frame.iloc[rows], ["a", "b"], 6)

    keyed = repeat_keys(keys, twins, 5)
    assert asked == [[0, 2, 3]]  # only rows whose key another row shares
    assert keyed[0] == keys[0] and keyed[1] == keys[1]  # the first of identical rows, and a row not repeated, keep theirs
    assert keyed[2] == _hashlib_key(f"5:{keys[0]}#1") and keyed[3] == _hashlib_key(f"5:{keys[0]}#2")
    # rows of equal key but another twin key (different rows whose keys collide; forced here) are each a first
    colliding, twin = np.array([7, 7, 7, 3]), np.array([1, 2, 1, 9])
    assert repeat_keys(colliding, lambda rows: twin[rows], 5).tolist() == [7, 7, _hashlib_key("5:7#1"), 3]
    asked.clear()
    assert repeat_keys(keys[:2], twins, 5).tolist() == keys[:2].tolist() and asked == []  # nothing repeated, nothing asked


@pytest.mark.parametrize("rows", [0, 1])
def test_no_rows_or_one_row(rows):
    frame = pd.DataFrame({"id": ["A1"][:rows]}, dtype=object)
    assert len(split_keys(frame, ["id"], 1)) == rows
