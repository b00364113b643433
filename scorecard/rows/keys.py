"""The split key of each row: a seeded hash of its id (or of its values), the same in every engine.

The hold-out sample must not depend on where the rows live or in which order they come, so
each row gets a key computed from its content alone, by rules every engine can follow exactly:

1. The **canonical text** of a value, by its type as read:

   ==========  ==============================================================================
   integer     decimal text: ``-42``
   float       missing when NaN; ``inf`` / ``-inf``; a whole number below 2**63 in size is
               the integer's text (``3.0`` is ``3``, ``-0.0`` is ``0``, so an integer column
               read as floats elsewhere agrees); any other finite x is its exact binary form
               ``<sign><m>p<e>`` with x = m·2**e and 2**52 <= m < 2**53 (no engine's own
               float-to-text is used: they disagree)
   text        the UTF-8 bytes as read: no trimming, no Unicode normalisation
   date        ``YYYY-MM-DD``
   boolean     ``true`` / ``false``
   timestamp   microseconds since 1970-01-01 as integer text
   ==========  ==============================================================================

2. The **row text** of some columns: per column, in sorted-name order, ``-`` when the value
   is missing, else ``<length in bytes>:<canonical text>``; joined by ``|``. The length makes it
   one-to-one: two different rows never share a row text.

3. The **key**: the first 15 hexadecimal digits of ``md5("<seed>:" + row text)`` as an integer
   (0 <= key < 2**60; a SQL engine's BIGINT holds it). The split key is that of the id column's
   row text when the ledger has an id column, else that of the whole row.

   Without an id column, identical rows would share one key and so one sample, all of them: a
   ledger that repeats its rows a lot would give a hold-out of a few kinds of row. So repeats are
   keyed apart: rows of equal key are told apart by their **twin key** (the key of the same row
   text under seed + 1); of the rows that share both, one keeps its key and the n-th other one
   (n = 1, 2, ...) takes the key of the text ``"<key>#<n>"`` (the key in decimal). Identical rows
   are interchangeable, so which of them keeps its key does not matter: the samples stay the same
   in any row order. A row that is not repeated keeps its key.

4. **How many and which**: each outcome class of n rows gives ``holdout_count(n, fraction)`` rows
   of smallest key to the hold-out; a sub-sample of development takes the rows of smallest
   ``subsample_keys`` (the keys reordered by an odd multiplier, one per purpose).

MD5 here is a well-spread hash every SQL engine has, not a guard against anyone: nothing secret
depends on it. It is computed in numpy, one 64-byte block per step for many rows at once.
"""

from __future__ import annotations

import datetime
import decimal
from collections.abc import Callable, Sequence
from fractions import Fraction

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

KEY_BITS = 60  # 15 hex digits: the key fits a signed 64-bit integer in every engine
MISSING_FIELD = "-"
FIELD_SEPARATOR = "|"
REPEAT_MARK = "#"  # "<key>#<n>": the text whose key the n-th repeat of a row takes
TWIN_SEED_STEP = 1  # twin keys hash the row text under seed + 1
_CHUNK_ROWS = 1 << 14  # rows hashed together: the uint32 work arrays stay in the processor's cache
_TWO_63 = 2.0**63


def split_keys(frame: pd.DataFrame, columns: Sequence[str], seed: int) -> np.ndarray:
    """Return the seeded key of every row over the named columns (int64, 0 <= key < 2**60).

    Parameters
    ----------
    frame : pandas.DataFrame
        The rows as read.
    columns : sequence of str
        The id column, or every column of the ledger (order does not matter: names are sorted).
    seed : int
        The settings' ``samples.seed``.
    """
    return md5_keys(seeded(row_texts(frame, columns), seed))


def repeat_keys(keys: np.ndarray, twins: Callable[[np.ndarray], np.ndarray], seed: int) -> np.ndarray:
    """Return the split keys with the repeats of a row keyed apart (rule 3 of the module).

    Parameters
    ----------
    keys : numpy.ndarray
        The split key of every row (``split_keys`` over the whole row).
    twins : callable
        ``twins(rows)``: the twin keys (``split_keys`` under seed + 1) of the rows numbered
        ``rows`` (ascending); asked only for rows whose key another row shares.
    seed : int
        The settings' ``samples.seed``.
    """
    order = np.argsort(keys, kind="stable")
    ordered = keys[order]
    same = ordered[1:] == ordered[:-1]
    if not same.any():
        return keys
    shared = np.zeros(len(keys), dtype=bool)
    shared[1:] |= same
    shared[:-1] |= same
    rows = np.sort(order[shared])
    twin = np.asarray(twins(rows), dtype=np.int64)
    by = np.lexsort((rows, twin, keys[rows]))  # by key, then twin key, then row
    key, twin, rows = keys[rows][by], twin[by], rows[by]
    starts = np.r_[True, (key[1:] != key[:-1]) | (twin[1:] != twin[:-1])]
    place = np.arange(len(rows))
    repeat = place - np.maximum.accumulate(np.where(starts, place, 0))  # 0 for the first of equal rows, then 1, 2, ...
    again = repeat > 0
    texts = pc.binary_join_element_wise(pc.cast(pa.array(key[again]), pa.string()), pc.cast(pa.array(repeat[again]), pa.string()),
                                        REPEAT_MARK)
    keyed = keys.copy()
    keyed[rows[again]] = md5_keys(seeded(texts, seed))
    return keyed


def seeded(texts: pa.Array, seed: int) -> pa.Array:
    """Prefix each text with ``"<seed>:"``, the input the key hashes."""
    return pc.binary_join_element_wise(f"{int(seed)}:", texts, "")


def row_texts(frame: pd.DataFrame, columns: Sequence[str]) -> pa.Array:
    """Return the row text of every row over the named columns (see the module's rules)."""
    fields = []
    for name in sorted(columns):
        text = canonical_texts(frame[name])
        field = pc.binary_join_element_wise(pc.cast(pc.binary_length(text), pa.string()), text, ":")
        fields.append(pc.fill_null(field, MISSING_FIELD))
    if not fields:
        return pa.array([""] * len(frame), pa.string())
    return fields[0] if len(fields) == 1 else pc.binary_join_element_wise(*fields, FIELD_SEPARATOR)


def canonical_texts(values: pd.Series) -> pa.Array:
    """Return the canonical text of every value of a column (null where the value is missing)."""
    dtype = values.dtype
    if isinstance(dtype, pd.CategoricalDtype):
        categories = canonical_texts(pd.Series(dtype.categories)).to_pylist()
        codes = values.cat.codes.to_numpy()
        return pa.array([categories[c] if c >= 0 else None for c in codes], pa.string())
    if pd.api.types.is_bool_dtype(dtype):
        return _bool_texts(pa.array(values, from_pandas=True, type=pa.bool_()))
    if pd.api.types.is_integer_dtype(dtype):
        return pc.cast(pa.array(values, from_pandas=True), pa.string())
    if pd.api.types.is_float_dtype(dtype):
        return float_texts(values.to_numpy(dtype=float, na_value=np.nan))
    if pd.api.types.is_datetime64_any_dtype(dtype):
        return _timestamp_texts(pa.array(values, from_pandas=True))
    if pd.api.types.is_string_dtype(dtype) and not pd.api.types.is_object_dtype(dtype):
        return pa.array(values, from_pandas=True, type=pa.string())
    return _object_texts(values)


def float_texts(x: np.ndarray) -> pa.Array:
    """Canonical texts of float64 values: NaN missing, whole numbers as integers, others in exact binary form."""
    x = np.asarray(x, dtype=np.float64)
    finite = np.isfinite(x)
    with np.errstate(invalid="ignore"):
        whole = finite & (np.floor(x) == x) & (np.abs(x) < _TWO_63)
    integers = pc.cast(pa.array(np.where(whole, x, 0.0).astype(np.int64)), pa.string())
    size = np.abs(np.where(whole | ~finite, 1.0, x))
    _, exponent = np.frexp(size)  # size = f * 2**exponent, 0.5 <= f < 1
    exponent = np.maximum(exponent.astype(np.int64) - 1, -1022)  # subnormals keep e = -1022 - 52
    mantissa = np.ldexp(np.ldexp(size, -exponent), 52).astype(np.int64)  # exact: a power-of-two scaling
    sign = pa.array(np.where(np.signbit(x), "-", ""))
    binary = pc.binary_join_element_wise(sign, pc.cast(pa.array(mantissa), pa.string()), "p",
                                         pc.cast(pa.array(exponent - 52), pa.string()), "")
    infinite = pa.array(np.where(x > 0, "inf", "-inf"))
    texts = pc.if_else(pa.array(whole), integers, pc.if_else(pa.array(np.isinf(x)), infinite, binary))
    return pc.if_else(pa.array(np.isnan(x)), pa.nulls(len(x), pa.string()), texts)


def canonical_text(value: object) -> str | None:
    """The canonical text of one Python value (None when missing): the slow rule for mixed columns."""
    if value is None or value is pd.NA or value is pd.NaT:
        return None
    if isinstance(value, (bool, np.bool_)):
        return "true" if value else "false"
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    if isinstance(value, (float, np.floating)):
        return float_texts(np.array([float(value)]))[0].as_py()
    if isinstance(value, (pd.Timestamp, datetime.datetime)):
        return _timestamp_texts(pa.array([pd.Timestamp(value)]))[0].as_py()
    if isinstance(value, datetime.date):
        return value.isoformat()
    if isinstance(value, decimal.Decimal):
        return float_texts(np.array([float(value)]))[0].as_py()
    return str(value)


def md5_keys(texts: pa.Array) -> np.ndarray:
    """Return ``int(md5(text)[:15], 16)`` for every text, as int64 (texts must not be missing).

    Notes
    -----
    Each text is padded as MD5 pads it (R. Rivest, RFC 1321, 1992, section 3) into as many
    64-byte blocks as it needs; rows needing the same number of blocks are hashed together, one
    vectorised round of the compression function per block. The tests check it against hashlib.
    """
    if isinstance(texts, pa.ChunkedArray):
        texts = pa.concat_arrays(texts.chunks) if texts.num_chunks else pa.array([], pa.string())
    texts = texts.cast(pa.string())
    if texts.null_count:
        raise ValueError("md5_keys: a text is missing")  # our own invariant: row texts are never null
    lengths = pc.binary_length(texts).to_numpy(zero_copy_only=False).astype(np.int64)
    blocks = (lengths + 8) // 64 + 1
    keys = np.empty(len(texts), dtype=np.int64)
    for n_blocks in np.unique(blocks):
        rows = np.flatnonzero(blocks == n_blocks)
        for start in range(0, len(rows), _CHUNK_ROWS):
            part = rows[start:start + _CHUNK_ROWS]
            keys[part] = _md5_prefix(_padded(texts.take(pa.array(part)), lengths[part], int(n_blocks)))
    return keys


# --------------------------------------------------------------------------------------------
# How many rows, and which order, each sample takes


def holdout_count(n_rows: int, fraction: float) -> int:
    """Rows of a class that go to the hold-out sample: floor(n × fraction + 1/2), in exact arithmetic.

    The fraction is taken as the decimal the settings file writes (0.3 is 3/10), so every engine
    rounds the same way.
    """
    return int(n_rows * Fraction(repr(float(fraction))) + Fraction(1, 2))


# odd 64-bit multipliers (the golden ratio's and a well-known hash prime) that reorder the split keys
# for each sub-sample of development, so that it is drawn independently of the hold-out
SUBSAMPLE_MULTIPLIERS = {"classing": 0x9E3779B97F4A7C15, "selection": 0xC2B2AE3D27D4EB4F, "comparison": 0x165667B19E3779F9}


def subsample_keys(keys: np.ndarray, purpose: str) -> np.ndarray:
    """The split keys reordered for a sub-sample: the top 60 bits of key × multiplier modulo 2**64.

    A one-to-one map (the multiplier is odd), so rows of different keys keep different keys;
    multiplicative hashing as in D. E. Knuth, The Art of Computer Programming, vol. 3, section 6.4.
    """
    product = keys.astype(np.uint64) * np.uint64(SUBSAMPLE_MULTIPLIERS[purpose])  # wraps modulo 2**64
    return (product >> np.uint64(4)).astype(np.int64)


# --------------------------------------------------------------------------------------------
# MD5 over many texts at once


_SHIFTS = np.array([7, 12, 17, 22] * 4 + [5, 9, 14, 20] * 4 + [4, 11, 16, 23] * 4 + [6, 10, 15, 21] * 4, dtype=np.uint32)
_SINES = np.array([int(abs(np.sin(np.float64(i + 1))) * 2**32) & 0xFFFFFFFF for i in range(64)], dtype=np.uint32)
_WORD = [i if i < 16 else (5 * i + 1) % 16 if i < 32 else (3 * i + 5) % 16 if i < 48 else (7 * i) % 16 for i in range(64)]
_START = (0x67452301, 0xEFCDAB89, 0x98BADCFE, 0x10325476)


def _padded(texts: pa.Array, lengths: np.ndarray, n_blocks: int) -> np.ndarray:
    """The texts as MD5 pads them: bytes, 0x80, zeros, the bit length; rows × (64·n_blocks) bytes."""
    width = 64 * n_blocks
    # right-padding with NUL to width-8 bytes gives every row the same length (all are shorter)
    padded = pc.ascii_rpad(texts, width=width - 8, padding="\x00")  # counts bytes, so UTF-8 text pads right
    padded = padded.cast(pa.large_binary())
    data = np.frombuffer(padded.buffers()[2], dtype=np.uint8, count=len(texts) * (width - 8),
                         offset=int(np.frombuffer(padded.buffers()[1], dtype=np.int64)[padded.offset]))
    message = np.zeros((len(texts), width), dtype=np.uint8)
    message[:, :width - 8] = data.reshape(len(texts), width - 8)
    message[np.arange(len(texts)), lengths] = 0x80
    message[:, width - 8:] = (lengths.astype("<u8") * 8).view(np.uint8).reshape(-1, 8)
    return message


def _md5_prefix(message: np.ndarray) -> np.ndarray:
    """First 60 bits of the MD5 digest of every row of padded ``message`` bytes."""
    state = [np.full(len(message), np.uint32(v), dtype=np.uint32) for v in _START]
    words = message.view("<u4")
    for block in range(message.shape[1] // 64):
        state = _compress(state, np.ascontiguousarray(words[:, 16 * block:16 * block + 16].T))
    a, b = state[0], state[1]
    # the digest's bytes are A then B, each little-endian; its first 8 bytes read big-endian
    first = (a.byteswap().astype(np.uint64) << np.uint64(32)) | b.byteswap().astype(np.uint64)
    return (first >> np.uint64(64 - KEY_BITS)).astype(np.int64)


def _compress(state: list[np.ndarray], words: np.ndarray) -> list[np.ndarray]:
    """One MD5 block for every row: ``words`` is 16 × rows; returns the new state (in-place uint32 work)."""
    a, b, c, d = (s.copy() for s in state)
    f = np.empty_like(a)
    rotated = np.empty_like(a)
    for i in range(64):
        if i < 16:    # (b & c) | (~b & d)  ==  d ^ (b & (c ^ d))
            np.bitwise_xor(c, d, out=f); np.bitwise_and(f, b, out=f); np.bitwise_xor(f, d, out=f)
        elif i < 32:  # (d & b) | (~d & c)  ==  c ^ (d & (b ^ c))
            np.bitwise_xor(b, c, out=f); np.bitwise_and(f, d, out=f); np.bitwise_xor(f, c, out=f)
        elif i < 48:
            np.bitwise_xor(b, c, out=f); np.bitwise_xor(f, d, out=f)
        else:
            np.invert(d, out=f); np.bitwise_or(f, b, out=f); np.bitwise_xor(f, c, out=f)
        np.add(f, a, out=f); np.add(f, words[_WORD[i]], out=f); np.add(f, _SINES[i], out=f)
        shift = _SHIFTS[i]
        np.left_shift(f, shift, out=rotated); np.right_shift(f, np.uint32(32 - shift), out=f)
        np.bitwise_or(f, rotated, out=f)
        np.add(f, b, out=f)
        a, d, c, b = d, c, b, a  # the old a's buffer takes the new b
        np.copyto(b, f)
    return [s + n for s, n in zip(state, (a, b, c, d))]


def _bool_texts(values: pa.Array) -> pa.Array:
    return pc.if_else(values, "true", "false")


def _timestamp_texts(values: pa.Array) -> pa.Array:
    if pa.types.is_timestamp(values.type) and values.type.tz is not None:
        values = values.cast(pa.timestamp(values.type.unit))  # the instant in UTC
    return pc.cast(values.cast(pa.timestamp("us")).cast(pa.int64()), pa.string())


def _object_texts(values: pd.Series) -> pa.Array:
    """Texts of an object column: by its Arrow type when it has one, else value by value."""
    try:
        array = pa.array(values, from_pandas=True)
    except (pa.ArrowInvalid, pa.ArrowTypeError):
        return pa.array([canonical_text(v) for v in values], pa.string())
    kind = array.type
    if pa.types.is_string(kind) or pa.types.is_large_string(kind) or pa.types.is_null(kind):
        return array.cast(pa.string())
    if pa.types.is_boolean(kind):
        return _bool_texts(array)
    if pa.types.is_integer(kind):
        return pc.cast(array, pa.string())
    if pa.types.is_floating(kind):
        return float_texts(array.to_numpy(zero_copy_only=False).astype(float))
    if pa.types.is_date(kind):
        return pc.strftime(array.cast(pa.date32()).cast(pa.timestamp("s")), "%Y-%m-%d")
    if pa.types.is_timestamp(kind):
        return _timestamp_texts(array)
    return pa.array([canonical_text(v) for v in values], pa.string())
