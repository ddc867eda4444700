"""The compiled kernels against plain-numpy (or pure-Python) references on random inputs.

The absorption kernels (specforce/absorption/_kernels.py) are reached through the public numpy functions
that wrap them (lineshapes.voigt_function, lineshapes.voigt_profile, linesum.optical_depth,
grids.graded_grid), so that a change of the private signatures does not break these tests; the parsing
kernels (specforce/io/_parsekernels.py) are called directly. Each reference is written here from the
formula in the module's docstring, not from the kernel's code, and loops the obvious way.

Tolerances: 1e-12 relative where the kernel and the reference evaluate the same formula (only the order
of the floating-point operations differs); the fast summation methods, which approximate the direct sum,
are held to the 0.1 % required of them.
"""

import math

import numpy as np
import pytest
import scipy.constants as sc
from scipy.special import wofz

from specforce.absorption.grids import graded_grid
from specforce.absorption.lineshapes import voigt_function, voigt_profile
from specforce.io import _parsekernels as pk

# Second radiation constant h c / k [cm K], from scipy's CODATA values (not from specforce.constants).
C2_CM_K = sc.h * sc.c / sc.k * 100.0


# --- the Voigt function: Weideman (1994) rational approximation and the asymptotic continued fraction --------

def _weideman_reference(x, y, n=32):
    """K(x, y) = Re w(x + iy) by Weideman (1994), Eq. (38)-(39), N = 32, inside |x| + y < 6, the 12th and
    8th convergents of the Laplace continued fraction in 6-8 and 8-15, and the continued fraction
    w ~ (i/sqrt(pi)) (z^2 - 1) / (z (z^2 - 3/2)) beyond (lineshapes.voigt_function)."""
    m = 2 * n
    ell = math.sqrt(n / math.sqrt(2.0))
    k = np.arange(-m + 1, m)
    t = ell * np.tan(k * np.pi / (2 * m))
    f = np.concatenate(([0.0], np.exp(-t * t) * (ell * ell + t * t)))
    a = np.real(np.fft.fft(np.fft.fftshift(f))) / (2 * m)
    a = a[1 : n + 1][::-1]
    z = np.asarray(x, dtype=float) + 1j * np.asarray(y, dtype=float)
    lz = ell - 1j * z
    zz = (ell + 1j * z) / lz
    p = np.polyval(a, zz)  # Horner's scheme, highest coefficient first
    inner = 2.0 * p / (lz * lz) + 1.0 / (math.sqrt(math.pi) * lz)
    outer = 1j / math.sqrt(math.pi) * (z * z - 1.0) / (z * (z * z - 1.5))
    # between 6 and 8 and between 8 and 15: the 12th and 8th convergents of the Laplace continued
    # fraction, by its recurrence
    s = np.abs(z.real) + z.imag
    out = np.where(s >= 15.0, outer, inner)
    for terms, lo, hi in ((12, 6.0, 8.0), (8, 8.0, 15.0)):
        num, den = np.ones_like(z), np.zeros_like(z)  # A_-1, B_-1
        num1, den1 = np.zeros_like(z), np.ones_like(z)  # A_0, B_0
        for k in range(1, terms + 1):
            a = 1.0 if k == 1 else -(k - 1) / 2.0
            num, num1 = num1, z * num1 + a * num
            den, den1 = den1, z * den1 + a * den
        out = np.where((s >= lo) & (s < hi), 1j / math.sqrt(math.pi) * num1 / den1, out)
    return out.real


def test_voigt_function_against_the_numpy_weideman_reference():
    rng = np.random.default_rng(1)
    x = np.concatenate([rng.uniform(-20, 20, 3000), rng.standard_normal(1000), 10 ** rng.uniform(-6, 4, 1000)])
    y = np.concatenate([10 ** rng.uniform(-8, 3, 4000), np.zeros(1000)])
    got = voigt_function(x, y)
    ref = _weideman_reference(x, y)
    # absolute 1e-15 of K(0, 0) = 1: far out on the real axis K is exp(-x^2) and both give rounding noise
    assert np.allclose(got, ref, rtol=1e-12, atol=1e-15)
    # and the reference itself is the Voigt function: scipy's Faddeeva function (Poppe & Wijers / Zaghloul
    # algorithms), within the 1e-4 relative or 1e-8 absolute required of the approximation
    exact = wofz(x + 1j * y).real
    assert np.all(np.abs(ref - exact) <= np.maximum(1e-4 * np.abs(exact), 1e-8))


def _voigt_profile_reference(offset, alpha, gamma):
    """Area-normalised Voigt profile sqrt(ln2/pi)/alpha K(x, y) (Armstrong 1967, Eq. 6); the Lorentz
    profile where y = sqrt(ln2) gamma/alpha exceeds 100 (lineshapes module docstring)."""
    y = math.sqrt(math.log(2.0)) * gamma / alpha
    if y > 100.0:
        return gamma / math.pi / (offset * offset + gamma * gamma)
    x = math.sqrt(math.log(2.0)) * offset / alpha
    return math.sqrt(math.log(2.0) / math.pi) / alpha * _weideman_reference(x, np.full_like(x, y))


@pytest.mark.parametrize("seed", range(6))
def test_voigt_profile_against_the_numpy_reference(seed):
    rng = np.random.default_rng(seed)
    alpha = 10 ** rng.uniform(-4, -2)
    gamma = 10 ** rng.uniform(-7, 0) if seed else 0.0
    offset = np.sort(rng.uniform(-30, 30, 2000))
    assert np.allclose(voigt_profile(offset, alpha, gamma), _voigt_profile_reference(offset, alpha, gamma),
                       rtol=1e-12, atol=0.0)


# --- the line sum: its plain-numpy reference for every line treatment is in tests/test_absorption.py
# (test_direct_kernel_matches_a_plain_numpy_reference_for_each_far_wing), beside the treatment table.


# --- the graded grid ----------------------------------------------------------------------------------------

class _Significant:
    """The one method of SignificantLines that graded_grid reads."""

    def __init__(self, centre, width):
        self._lines = (centre, width)

    def lines(self):
        return self._lines


def _graded_reference(edges, centre, width, fraction, grading, max_spacing):
    """Every bin edge, and between edges steps of h(x) = min(h_max, min_j f sqrt(w_j^2 + (g (x - c_j))^2))
    over the lines that reach x (|x - c_j| < h_max / (f g): beyond it the line's spacing exceeds h_max); the
    last interval of a bin may be up to 1.25 h (grids module docstring)."""
    reach = max_spacing / (fraction * grading)
    pts, index = [], []
    for k, x in enumerate(edges):
        index.append(len(pts))
        pts.append(x)
        if k == len(edges) - 1:
            break
        while True:
            near = np.abs(x - centre) < reach
            h = min([max_spacing] + [fraction * math.hypot(w, grading * (x - c))
                                     for c, w in zip(centre[near], width[near])])
            x += h
            if x > edges[k + 1] - 0.25 * h:
                break
            pts.append(x)
    return np.array(pts), np.array(index)


def test_graded_grid_against_the_python_reference():
    rng = np.random.default_rng(3)
    centre = np.sort(rng.uniform(600.0, 603.0, 25))
    width = 10 ** rng.uniform(-4, -2, 25)
    grid = graded_grid(_Significant(centre, width), (600.0, 603.0), resolution=0.1, fraction=0.5, grading=0.5,
                       max_spacing=0.02)
    pts, index = _graded_reference(np.linspace(600.0, 603.0, 31), centre, width, 0.5, 0.5, 0.02)
    assert grid.wavenumber.size == pts.size and np.allclose(grid.wavenumber, pts, rtol=1e-13, atol=0.0)
    assert np.array_equal(grid.edge_index, index)


# --- the fixed-width record parser --------------------------------------------------------------------------

_NUMBER = __import__("re").compile(r"^([+-]?)(\d+\.?\d*|\.\d+)(?:[EeDd]([+-]?\d+)|([+-]\d+))?$")


def _parse_number_reference(text):
    """A Fortran F/E/D field: blank, or an optionally signed decimal with an optional exponent written
    E, e, D or d, or a bare sign (1.5-3 is 1.5e-3); Python's float() converts the normalised text.
    Returns (value, status) with the kernel's status codes."""
    s = text.strip(" ")
    if not s:
        return 0.0, pk.BLANK
    m = _NUMBER.match(s)
    if not m or " " in s:
        return 0.0, pk.BAD
    sign, digits, e1, e2 = m.groups()
    return float(f"{sign}{digits}e{e1 or e2 or 0}"), pk.OK


def _random_field(rng, width):
    kind = rng.integers(7)
    if kind == 0:
        return " " * width
    if kind == 1:  # junk
        return "".join(rng.choice(list("0123456789.+-EeDdx "), width))
    mant = f"{rng.uniform(0, 10) * 10.0 ** rng.integers(-3, 4):.{rng.integers(0, 8)}f}"
    if rng.random() < 0.3:
        mant = "-" + mant
    if kind in (2, 3):
        text = mant
    else:
        e = int(rng.integers(-40, 40))
        text = mant + {4: "E", 5: "D", 6: ""}[int(kind)] + (f"{e:+d}" if kind == 6 or rng.random() < 0.5 else str(e))
    return text[-width:].rjust(width)


def _row(text):
    return np.frombuffer(text.encode("latin-1"), dtype=np.uint8)


def test_number_fields_against_the_python_reference():
    rng = np.random.default_rng(11)
    seen = {pk.OK: 0, pk.BLANK: 0, pk.BAD: 0}
    for _ in range(3000):
        width = int(rng.integers(3, 16))
        text = _random_field(rng, width)
        value, status = pk._parse_number(_row("##" + text + "##"), 2, width)
        ref, ref_status = _parse_number_reference(text)
        assert status == ref_status, text
        seen[status] += 1
        if status == pk.OK:
            # two roundings at most (an exact power of ten, then the product): within 2 ulp
            assert value == pytest.approx(ref, rel=5e-16, abs=1e-300), text
    assert min(seen.values()) > 100


def test_integer_fields_and_isotopologue_codes_against_the_python_reference():
    rng = np.random.default_rng(12)
    for _ in range(2000):
        width = int(rng.integers(1, 6))
        text = "".join(rng.choice(list("0123456789     x-"), width))
        s = text.lstrip(" ")  # leading blanks only: the digits must reach the end of the field
        ref = (0, pk.BLANK) if not s else ((int(s), pk.OK) if s.isdigit() else (0, pk.BAD))
        assert tuple(pk._parse_int(_row(text), 0, width)) == ref, text
    # isotopologue code: '1'-'9' are 1-9, '0' is 10, 'A'-'Z' are 11-36, anything else is refused
    for ch in range(256):
        c = chr(ch)
        ref = int(c) if c in "123456789" else 10 if c == "0" else 11 + ord(c) - 65 if "A" <= c <= "Z" else -1
        assert pk._iso_code(np.uint8(ch)) == ref, c


def test_record_parser_against_the_python_reference():
    # A made-up 40-byte layout: molecule in columns 0-1, isotopologue code in 2, then float fields of widths
    # 12, 10 and 15, the last of which may be blank.
    rng = np.random.default_rng(13)
    fstart, fwidth, fblank = np.array([3, 15, 25]), np.array([12, 10, 15]), np.array([False, False, True])
    rows, expected = [], []
    for _ in range(500):
        mol = rng.choice(["12", " 2", "  ", "x1", " 7"])
        iso = rng.choice(list("10AZa "))
        fields = [_random_field(rng, int(w)) for w in fwidth]
        rows.append(mol + iso + "".join(fields))
        m = mol.lstrip()
        ref_values, bad = [], -1
        if not m.isdigit():
            bad = -2
        elif iso not in "1234567890ABCDEFGHIJKLMNOPQRSTUVWXYZ":
            bad = -3
        else:
            for f, text in enumerate(fields):
                v, st = _parse_number_reference(text)
                if st == pk.OK:
                    ref_values.append(v)
                elif st == pk.BLANK and fblank[f]:
                    ref_values.append(np.nan)
                else:
                    bad = f
                    break
        expected.append((int(m) if bad != -2 else None, bad, ref_values))
    arr = np.frombuffer("".join(rows).encode("latin-1"), dtype=np.uint8).reshape(len(rows), 40)
    values, mol, iso, bad = pk.parse_records(arr, fstart, fwidth, fblank, 0, 2, 2)
    for r, (m, b, vals) in enumerate(expected):
        assert bad[r] == b, rows[r]
        if b == -1:
            assert mol[r] == m
            assert np.allclose(values[:, r], vals, rtol=5e-16, atol=0.0, equal_nan=True), rows[r]
    assert len({int(b) for b in bad}) >= 4  # good rows and each kind of bad row occur


def test_gather_rows_against_numpy_indexing():
    rng = np.random.default_rng(14)
    buf = rng.integers(0, 256, 5000).astype(np.uint8)
    starts = np.sort(rng.choice(5000 - 160, 40, replace=False)).astype(np.int64)
    ref = buf[starts[:, None] + np.arange(160)]
    assert np.array_equal(pk.gather_rows(buf, starts, 160), ref)
