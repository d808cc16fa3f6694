"""Fast path of the EPW and TMY3 readers: vectorised checks and number parsing over the bytes.

The line-by-line readers in :mod:`solair.weather.formats` check every line with
Python code and then hand the text to :mod:`pvlib.iotools`; that costs about 100 ms
for an hourly year, mostly in the per-line checks and in pvlib's string handling of
the date and time columns. The functions here do the same work for a *well-formed*
file in about ten milliseconds:

* the data block is checked as bytes with numpy: only ASCII letters, digits and
  ``. - + , ? * / :`` (no spaces, quotes or control characters), every line with the
  header's number of commas;
* the date, time, month, day and hour fields are read from fixed byte positions
  between those commas (two digits each, as the formats write them);
* the numeric fields are parsed from those byte positions by a compiled loop
  (:mod:`solair.weather._fast_kernels`, numba); only plain decimals ``-?D+(.D+)?``
  of up to 15 digits are accepted, for which the digits' integer divided by an exact power of
  ten is what pandas' C parser behind pvlib's readers computes (bit-identical
  values, at half the time of a ``pandas.read_csv`` call that tokenises every column);
* the conditions under which pvlib's own parse would fail (time zone, TMY3 USAF
  number and years, 29 February in a common year) are checked too.

Each function returns ``None`` as soon as anything is not as expected; the caller
then runs the line-by-line reader, which finds the problem and names the line and
field. A fast-path result is therefore only ever returned for a file that the
line-by-line reader accepts with the same table (tests/test_weather_fast.py checks
this on the real files and on random corruptions of them).
"""

from __future__ import annotations

import string

import numpy as np
import pandas as pd

from solair.weather.formats import (
    _EPW_FIELDS,
    _EPW_NFIELDS,
    _TMY3_FIELDS,
    _TMY3_LABELS,
    _TMY3_MISSING,
    OPTIONAL,
    RawTable,
)

__all__ = ["split_head", "epw_body", "tmy3_body"]

#: the bytes a well-formed data block consists of
_ALLOWED = (string.digits + string.ascii_letters + ".-+,?*/:\n").encode("ascii")
_DAYS = np.array([0, 31, 29, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])
_ZERO, _SLASH, _COLON, _QUERY = ord("0"), ord("/"), ord(":"), ord("?")
#: longest number field and most digits the fast parse accepts (15 digits are exact)
_MAX_WIDTH, _MAX_DIGITS = 17, 15


def split_head(text: str, n: int) -> tuple[list[str], str] | None:
    """The first ``n`` lines and the rest, or None.

    The head lines equal ``text.splitlines()[:n]``: None is returned when the text
    has fewer than ``n`` newlines or when its head holds another line separator
    that :meth:`str.splitlines` would split at.
    """
    pos = 0
    for _ in range(n):
        j = text.find("\n", pos)
        if j < 0:
            return None
        pos = j + 1
    head = text[:pos].splitlines()
    if len(head) != n:
        return None
    return head, text[pos:]


class _Block:
    """A data block as bytes: line starts/ends and the comma positions per line."""

    def __init__(self, data: bytes, a: np.ndarray, starts: np.ndarray, ends: np.ndarray,
                 commas: np.ndarray):
        self.data, self.a, self.starts, self.ends, self.commas = data, a, starts, ends, commas

    @property
    def nrows(self) -> int:
        return len(self.starts)

    def span(self, k: int) -> tuple[np.ndarray, np.ndarray]:
        """Start (inclusive) and end (exclusive) byte offsets of field ``k`` (0-based)."""
        s = self.starts if k == 0 else self.commas[:, k - 1] + 1
        e = self.ends if k == self.commas.shape[1] else self.commas[:, k]
        return s, e

    def small_int(self, k: int) -> np.ndarray | None:
        """Field ``k`` as an integer where it is one or two ASCII digits, else None."""
        s, e = self.span(k)
        w = e - s
        if not ((w == 1) | (w == 2)).all():
            return None
        d0 = self.a[s].astype(np.int64) - _ZERO
        d1 = self.a[np.minimum(s + 1, e)].astype(np.int64) - _ZERO  # e is a comma or the end
        two = w == 2
        if not ((d0 >= 0) & (d0 <= 9)).all() or not ((d1[two] >= 0) & (d1[two] <= 9)).all():
            return None
        return np.where(two, d0 * 10 + d1, d0)

    def is_char(self, k: int, char: int) -> np.ndarray:
        """Whether field ``k`` is exactly the single byte ``char``."""
        s, e = self.span(k)
        return ((e - s) == 1) & (self.a[s] == char)

    def floats(self, columns: list[int]) -> np.ndarray | None:
        """The given fields as float64 (rows × columns), None if any is not a plain decimal.

        Accepted: ``-?D+(.D+)?`` with at most 15 digits D, the way the formats write
        their numbers. Such a value is the integer of its digits (exact in float64)
        divided by an exact power of ten: one correctly rounded division, which is
        what pandas' C parser (``precise_xstrtod``, the parser behind pvlib's readers)
        computes for these strings, so the values are bit-identical to pvlib's.
        Anything else (exponent, ``+``, empty, ``.5``, text) is left to the slow path.
        """
        cols = np.asarray(columns)
        s = self.commas[:, np.maximum(cols - 1, 0)] + 1
        s[:, cols == 0] = self.starts[:, None]
        last_field = cols == self.commas.shape[1]
        e = self.commas[:, np.where(last_field, 0, cols)]
        e[:, last_field] = self.ends[:, None]
        s, w = s.ravel(), (e - s).ravel()
        if not len(s):
            return None
        from solair.weather._fast_kernels import plain_decimals

        v = plain_decimals(self.a, s, w, _MAX_WIDTH, _MAX_DIGITS)
        return None if v is None else v.reshape(-1, len(columns))


def _block(body: str, nfields: int) -> _Block | None:
    """Check the data block's characters and field counts; None if not well formed."""
    if not body.isascii():
        return None
    data = body.encode("ascii")
    if b"\r" in data:
        data = data.replace(b"\r\n", b"\n")
        if b"\r" in data:
            return None
    if data.translate(None, _ALLOWED):
        return None
    end = len(data)  # trailing newlines (blank last lines) are not data; no copy
    while end and data[end - 1] == 10:
        end -= 1
    if not end:
        return None
    a = np.frombuffer(data, dtype=np.uint8, count=end)
    nl = np.flatnonzero(a == 10)
    commas = np.flatnonzero(a == 44)
    nrows = len(nl) + 1
    if len(commas) != nrows * (nfields - 1):
        return None
    commas = commas.reshape(nrows, nfields - 1)
    starts = np.concatenate(([0], nl + 1))
    ends = np.concatenate((nl, [end]))
    # the commas are sorted and the lines contiguous: when each row of nfields - 1
    # commas starts and ends inside its own line, every line has exactly that many
    if (commas[:, 0] < starts).any() or (commas[:, -1] >= ends).any():
        return None
    return _Block(data, a, starts, ends, commas)


def _calendar_ok(month: np.ndarray, day: np.ndarray, hour: np.ndarray) -> bool:
    if not ((month >= 1) & (month <= 12)).all():
        return False
    return bool(((day >= 1) & (day <= _DAYS[month]) & (hour >= 1) & (hour <= 24)).all())


def _zone_ok(meta: dict) -> bool:
    """pvlib localises its index to the header's zone; keep to the zones in use."""
    tz = meta["utc_offset"]
    return bool(np.isfinite(tz) and -12.0 <= tz <= 14.0)


# --------------------------------------------------------------------------- EPW

def epw_body(body: str, meta: dict) -> RawTable | None:
    """The EPW data block (the text after the 8 header lines) as a RawTable, or None."""
    if not _zone_ok(meta):
        return None
    blk = _block(body, _EPW_NFIELDS)
    if blk is None:
        return None
    ints = [blk.small_int(k) for k in (1, 2, 3)]  # fields 2-4: month, day, hour
    if any(v is None for v in ints):
        return None
    month, day, hour = ints
    if not _calendar_ok(month, day, hour):
        return None
    cols = sorted({fno - 1 for _, fno, _ in _EPW_FIELDS.values()})
    v = blk.floats(cols)
    if v is None:
        return None
    pos = {c: j for j, c in enumerate(cols)}
    out = {}
    for col, (_, fno, code) in _EPW_FIELDS.items():
        x = v[:, pos[fno - 1]].copy()
        x[x >= code] = np.nan
        out[col] = x
    line_no = np.arange(9, 9 + blk.nrows)
    return RawTable("epw", meta, pd.DataFrame(out, copy=False), month, day, hour, line_no)


# --------------------------------------------------------------------------- TMY3

def _tmy3_header_ok(site_line: str, columns: list[str]) -> bool:
    """What pvlib's read_tmy3 needs of the two header lines to parse them."""
    from pvlib.iotools.tmy import VARIABLE_MAP

    site = site_line.split(",")
    if len(site) != 7:
        return False
    try:
        int(site[0])
        for s in site[3:]:
            float(s)
    except ValueError:
        return False
    if columns[:2] != ["Date (MM/DD/YYYY)", "Time (HH:MM)"]:
        return False
    if any(not c or '"' in c for c in columns) or len(set(columns)) != len(columns):
        return False
    return not set(columns) & set(VARIABLE_MAP.values())  # no clash after pvlib's renaming


def tmy3_body(body: str, meta: dict, site_line: str, columns: list[str]) -> RawTable | None:
    """The TMY3 data block (the text after the 2 header lines) as a RawTable, or None."""
    if not _zone_ok(meta) or not _tmy3_header_ok(site_line, columns):
        return None
    blk = _block(body, len(columns))
    if blk is None:
        return None
    a = blk.a
    s0, e0 = blk.span(0)
    s1, e1 = blk.span(1)
    if not ((e0 - s0) == 10).all() or not ((e1 - s1) == 5).all():
        return None
    date = a[s0[:, None] + np.arange(10)].astype(np.int64) - _ZERO  # MM/DD/YYYY
    time = a[s1[:, None] + np.arange(5)].astype(np.int64) - _ZERO   # HH:00
    dig_d, dig_t = [0, 1, 3, 4, 6, 7, 8, 9], [0, 1, 3, 4]
    if (not ((date[:, dig_d] >= 0) & (date[:, dig_d] <= 9)).all()
            or not ((time[:, dig_t] >= 0) & (time[:, dig_t] <= 9)).all()
            or not (date[:, [2, 5]] == _SLASH - _ZERO).all()
            or not (time[:, 2] == _COLON - _ZERO).all()
            or not (time[:, 3:] == 0).all()):
        return None
    month = date[:, 0] * 10 + date[:, 1]
    day = date[:, 3] * 10 + date[:, 4]
    year = date[:, 6] * 1000 + date[:, 7] * 100 + date[:, 8] * 10 + date[:, 9]
    hour = time[:, 0] * 10 + time[:, 1]
    if not _calendar_ok(month, day, hour) or not ((year >= 1800) & (year <= 2200)).all():
        return None
    common = (year % 4 != 0) | ((year % 100 == 0) & (year % 400 != 0))
    if ((month == 2) & (day == 29) & common).any():  # pvlib's date parse would fail
        return None
    present = {col: columns.index(_TMY3_LABELS[col]) for col in _TMY3_FIELDS
               if _TMY3_LABELS[col] in columns}
    cols = sorted(set(present.values()))
    v = blk.floats(cols)
    if v is None:
        return None
    pos = {c: j for j, c in enumerate(cols)}
    out = {}
    for col, (_, flag, scale) in _TMY3_FIELDS.items():
        if col not in present:
            continue  # formats._tmy3_header has checked that the required ones are there
        x = v[:, pos[present[col]]].copy()
        x[x <= _TMY3_MISSING] = np.nan
        if col in OPTIONAL and flag in columns:
            x[blk.is_char(columns.index(flag), _QUERY)] = np.nan
        out[col] = x * scale
    line_no = np.arange(3, 3 + blk.nrows)
    return RawTable("tmy3", meta, pd.DataFrame(out, copy=False), month, day, hour, line_no)
