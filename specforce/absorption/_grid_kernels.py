"""Private numba kernels of the graded grid: its points, and its quadrature summed per output bin.
Not API; :mod:`specforce.absorption.grids` calls them."""

import math

import numba as nb

from ..cache import keep_compiled_kernels

keep_compiled_kernels()  # before the kernels are decorated


@nb.njit(cache=True)
def graded_march(edges, centre, width, fraction, grading, max_spacing, out, edge_index):
    """Points of a graded grid: every edge, and between edges steps of the local spacing
    min(max_spacing, min_j fraction sqrt(width_j^2 + (grading (x - centre_j))^2)) over the
    lines j (sorted by centre) that reach x. Writes them to ``out`` and the index of each edge
    to ``edge_index``; with ``out`` of size 0 only counts them. Returns the number of points."""
    reach = max_spacing / (fraction * grading)
    store = out.shape[0] > 0
    n = 0
    a = 0
    nl = centre.shape[0]
    nedge = edges.shape[0]
    for k in range(nedge):
        x = edges[k]
        if store:
            edge_index[k] = n
            out[n] = x
        n += 1
        if k == nedge - 1:
            break
        stop = edges[k + 1]
        while True:
            while a < nl and centre[a] < x - reach:
                a += 1
            h = max_spacing
            b = a
            while b < nl and centre[b] < x + reach:
                d = grading * (x - centre[b])
                hh = fraction * math.sqrt(width[b] * width[b] + d * d)
                if hh < h:
                    h = hh
                b += 1
            x += h
            if x > stop - 0.25 * h:  # the last interval of a bin may be up to 1.25 h
                break
            if store:
                out[n] = x
            n += 1
    return n


@nb.njit(cache=True, nogil=True)
def bin_sums(values, start, coef, edge_index, out):
    """out[r, b] = sum over the intervals i of bin b (edge_index[b] <= i < edge_index[b + 1]) of
    sum_k coef[k, i] values[r, min(start[i] + k, last)]: the graded grid's interval rule summed per
    output bin (:meth:`specforce.absorption.grids.SpectralGrid.bin_averages`), for each row r."""
    last = values.shape[1] - 1
    for r in range(values.shape[0]):
        for b in range(edge_index.shape[0] - 1):
            s = 0.0
            for i in range(edge_index[b], edge_index[b + 1]):
                p = start[i]
                s += (coef[0, i] * values[r, min(p, last)] + coef[1, i] * values[r, min(p + 1, last)]
                      + coef[2, i] * values[r, min(p + 2, last)] + coef[3, i] * values[r, min(p + 3, last)])
            out[r, b] = s
