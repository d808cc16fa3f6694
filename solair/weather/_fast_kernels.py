"""Compiled (numba) number parse of the weather fast path (:mod:`solair.weather._fast`).

:func:`plain_decimals` reads the fields' plain decimals ``-?D+(.D+)?`` as float64,
field by field, with the acceptance rules and the arithmetic of the numpy version it
replaces (which went over one byte position of every field at a time, ~6.5 ms for
8760 x 12 TMY3 fields): the digits' integer (exact in int64 and in float64 for up to
15 digits) divided by an exact power of ten, one correctly rounded division, so the
values are bit-identical to it and to pandas' C parser (``precise_xstrtod``).

numba is imported on the first call (:func:`_kernel`), never on import, and the loop
is compiled for one signature only (read-only C-contiguous uint8 bytes as
:func:`numpy.frombuffer` gives them, writable C-contiguous int64 offsets).
"""

from __future__ import annotations

import functools

import numpy as np

__all__ = ["plain_decimals"]

#: the exact powers of ten 10**0 ... 10**15 (read-only, as the kernel is compiled for)
_POW10 = np.array([float(10**k) for k in range(16)])
_POW10.flags.writeable = False


def _decimals_loop(a, s, w, pow10, max_width, max_digits, out):  # pragma: no cover - compiled
    """Parse field k = bytes ``a[s[k]:s[k] + w[k]]`` into ``out[k]``; False at the first
    field that is not a plain decimal of 1 to ``max_width`` bytes and 1 to
    ``max_digits`` digits (the caller then takes the line-by-line reader)."""
    for k in range(s.shape[0]):
        width = w[k]
        if width < 1 or width > max_width:
            return False
        start = s[k]
        neg = a[start] == 45  # "-"
        mant = np.int64(0)
        ndig = 0
        ndec = 0
        point = False
        for j in range(1 if neg else 0, width):
            b = a[start + j]
            if 48 <= b <= 57:  # a digit
                mant = mant * 10 + (b - 48)
                ndig += 1
                if point:
                    ndec += 1
            elif b == 46:  # "."
                if point or ndig == 0:
                    return False
                point = True
            else:
                return False
        if ndig < 1 or ndig > max_digits or (point and ndec == 0):
            return False
        v = np.float64(mant) / pow10[ndec]
        out[k] = -v if neg else v
    return True


@functools.cache
def _kernel():
    """:func:`_decimals_loop` compiled once for its one signature; no other at call time."""
    import numba
    from numba import types

    raw = types.Array(types.uint8, 1, "C", readonly=True)
    i64 = types.Array(types.int64, 1, "C")
    dec = numba.njit(cache=True)(_decimals_loop)
    dec.compile((raw, i64, i64, types.Array(types.float64, 1, "C", readonly=True),
                 types.int64, types.int64, types.Array(types.float64, 1, "C")))
    dec.disable_compile()
    return dec


def _bytes_view(a: np.ndarray) -> np.ndarray:
    """``a`` as the read-only C-contiguous uint8 array the kernel is compiled for."""
    if a.flags.writeable or not a.flags.c_contiguous or a.dtype != np.uint8:
        a = np.array(a, dtype=np.uint8, order="C")
        a.flags.writeable = False
    return a


def plain_decimals(a: np.ndarray, start: np.ndarray, width: np.ndarray, max_width: int,
                   max_digits: int) -> np.ndarray | None:
    """The fields ``a[start[k]:start[k] + width[k]]`` as float64, or None.

    Parameters
    ----------
    a : numpy.ndarray of uint8
        The bytes.
    start, width : numpy.ndarray of int (n,)
        Byte offset and length [bytes] of each field.
    max_width, max_digits : int
        Longest field [bytes] and most digits accepted (1 to 15: exact in float64).

    Returns
    -------
    numpy.ndarray of float64 (n,) or None
        None when any field is not ``-?D+(.D+)?`` with 1 to ``max_digits`` digits
        and 1 to ``max_width`` bytes.
    """
    if not 1 <= max_digits <= 15:
        raise ValueError(f"max_digits = {max_digits}; allowed 1 to 15 (exact in float64)")
    out = np.empty(len(start), dtype=np.float64)
    ok = _kernel()(_bytes_view(a), np.ascontiguousarray(start, dtype=np.int64),
                   np.ascontiguousarray(width, dtype=np.int64), _POW10, int(max_width),
                   int(max_digits), out)
    return out if ok else None
