"""Private numba kernels that parse fixed-width line records.

Public code calls :mod:`specforce.io.linerecords`; nothing here is API. Each kernel
has a plain-Python counterpart in the tests that it is checked against.
"""

import numba as nb
import numpy as np

from ..cache import keep_compiled_kernels

keep_compiled_kernels()  # before the kernels are decorated

# Status codes of _parse_number.
OK, BLANK, BAD = 0, 1, 2

_POW10 = np.array([10.0**k for k in range(23)])


@nb.njit(cache=True, inline="always")
def _scale10(mant, e10):
    # mant * 10**e10 with at most two roundings (exact powers up to 1e22).
    if e10 >= 0:
        while e10 > 22:
            mant *= 1e22
            e10 -= 22
        return mant * _POW10[e10]
    e10 = -e10
    while e10 > 22:
        mant /= 1e22
        e10 -= 22
    return mant / _POW10[e10]


@nb.njit(cache=True)
def _parse_number(row, start, width):
    """Parse a Fortran F/E/D field; return (value, status)."""
    i = start
    end = start + width
    while i < end and row[i] == 32:
        i += 1
    if i == end:
        return 0.0, BLANK
    neg = False
    if row[i] == 43 or row[i] == 45:  # + -
        neg = row[i] == 45
        i += 1
    mant = 0
    nsig = 0
    nfrac = 0
    seen_point = False
    any_digit = False
    dropped = 0
    while i < end:
        ch = row[i]
        if 48 <= ch <= 57:
            any_digit = True
            d = ch - 48
            if nsig < 18:
                if mant > 0 or d > 0:
                    nsig += 1
                mant = mant * 10 + d
                if seen_point:
                    nfrac += 1
            elif not seen_point:
                dropped += 1
            i += 1
        elif ch == 46 and not seen_point:  # .
            seen_point = True
            i += 1
        else:
            break
    if not any_digit:
        return 0.0, BAD
    exp = 0
    if i < end and row[i] != 32:
        ch = row[i]
        if ch == 69 or ch == 101 or ch == 68 or ch == 100:  # E e D d
            i += 1
        elif ch != 43 and ch != 45:
            return 0.0, BAD
        eneg = False
        if i < end and (row[i] == 43 or row[i] == 45):
            eneg = row[i] == 45
            i += 1
        nexp = 0
        while i < end and 48 <= row[i] <= 57:
            exp = exp * 10 + (row[i] - 48)
            nexp += 1
            i += 1
        if nexp == 0:
            return 0.0, BAD
        if eneg:
            exp = -exp
    while i < end:
        if row[i] != 32:
            return 0.0, BAD
        i += 1
    value = _scale10(float(mant), exp - nfrac + dropped)
    return (-value if neg else value), OK


@nb.njit(cache=True)
def _parse_int(row, start, width):
    i = start
    end = start + width
    while i < end and row[i] == 32:
        i += 1
    if i == end:
        return 0, BLANK
    v = 0
    while i < end and 48 <= row[i] <= 57:
        v = v * 10 + (row[i] - 48)
        i += 1
    if i != end:
        return 0, BAD
    return v, OK


@nb.njit(cache=True)
def _iso_code(ch):
    if 49 <= ch <= 57:  # '1'..'9'
        return ch - 48
    if ch == 48:  # '0'
        return 10
    if 65 <= ch <= 90:  # 'A'..'Z'
        return 11 + ch - 65
    return -1


@nb.njit(cache=True, parallel=True, nogil=True)
def parse_records(rows, fstart, fwidth, fblank_ok, mol_start, mol_width, iso_col):
    """Parse n records of 160 bytes.

    Returns (values [k, n] float64, molecule [n] int16, isotopologue [n] int16,
    bad [n] int64), where bad is -1 for a good row, -2 for a bad molecule field,
    -3 for a bad isotopologue field, or the index of the first bad float field.
    Blank optional float fields come back as NaN.
    """
    n = rows.shape[0]
    k = fstart.shape[0]
    values = np.empty((k, n))
    mol = np.zeros(n, dtype=np.int16)
    iso = np.zeros(n, dtype=np.int16)
    bad = np.full(n, -1, dtype=np.int64)
    for r in nb.prange(n):
        row = rows[r]
        m, st = _parse_int(row, mol_start, mol_width)
        if st != OK:
            bad[r] = -2
            continue
        mol[r] = m
        c = _iso_code(row[iso_col])
        if c < 0:
            bad[r] = -3
            continue
        iso[r] = c
        for f in range(k):
            v, st = _parse_number(row, fstart[f], fwidth[f])
            if st == OK:
                values[f, r] = v
            elif st == BLANK and fblank_ok[f]:
                values[f, r] = np.nan
            else:
                bad[r] = f
                break
    return values, mol, iso, bad


@nb.njit(cache=True, parallel=True, nogil=True)
def gather_rows(buf, starts, width):
    """Copy ``width`` bytes from each start offset into an [n, width] array."""
    n = starts.shape[0]
    out = np.empty((n, width), dtype=np.uint8)
    for r in nb.prange(n):
        s = starts[r]
        for c in range(width):
            out[r, c] = buf[s + c]
    return out
