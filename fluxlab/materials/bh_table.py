"""The reluctivity table of a nonlinear material: nu(B^2), its derivative and the energy.

From a checked stack curve (H, B) (see :mod:`fluxlab.materials.material`):

1. the polarization J = B - mu0 H is interpolated over H by a monotone piecewise cubic
   (Fritsch-Carlson / PCHIP slopes), so dB/dH >= mu0 everywhere: J never decreases;
2. nu(B^2) = H(B) / B is tabulated at equally spaced B from 0 to B_last, with its exact
   value and derivative at each node, and interpolated by cubic Hermite pieces in b_sq = B^2,
   so d nu/d(b_sq) is the exact derivative of the nu the solver sees; the energy density
   w = integral H dB = integral nu/2 d(b_sq) is the exact integral of the same pieces.

Everything is SI: H in A/m, B in T, nu in m/H, energy densities in J/m^3.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fluxlab.errors import MaterialError

__all__ = ["MU0", "Curve", "tabulate", "evaluate_pieces", "polarization"]

MU0: float = 4e-7 * math.pi  # H/m, the pre-2019 exact value (CODATA 2018: 5.5e-10 higher)

_TABLE_NODES = 2049  # nodes of the nu table, equally spaced in B from 0 to B_last
_CHUNK = 8192  # values per pass in table look-ups


@dataclass(frozen=True)
class Curve:
    """Precomputed data of a nonlinear material.

    Piece i of the nu table spans s[i] <= b_sq <= s[i+1]; with t = (b_sq - s[i]) * inv_ds[i]
    in [0, 1]: nu = sum_p nu_c[p][i] t^p, d nu/d(b_sq) = sum_p dnu_c[p][i] t^p and
    w = w_c[0][i] + sum_p w_c[p][i] t^p (p >= 1), all one cubic and its exact derivative
    and integral.
    """

    j: np.ndarray  # J at the knots h_table, T
    dj: np.ndarray  # dJ/dH at the knots, T m/A
    inv_b_step: float  # 1 / spacing of the nu table in B, 1/T
    s: np.ndarray  # table nodes in b_sq, T^2
    inv_ds: np.ndarray  # 1 / (s[i+1] - s[i]), 1/T^2
    nu_c: tuple[np.ndarray, ...]
    dnu_c: tuple[np.ndarray, ...]
    w_c: tuple[np.ndarray, ...]
    b_last: float
    h_last: float
    j_last: float
    w_last: float


def _pchip_slopes(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Monotone slopes at the knots of nondecreasing data.

    Interior: the weighted harmonic mean of the neighbouring secants (F. N. Fritsch and
    J. Butland, SIAM J. Sci. Stat. Comput. 5(2), 1984), 0 at a flat neighbour. First knot:
    the first secant; last knot: 0, so J joins the constant continuation smoothly. Every
    slope lies in [0, 3 x adjacent secant]: the Fritsch-Carlson condition for a monotone
    cubic (SIAM J. Numer. Anal. 17(2), 1980).
    """
    hk = np.diff(x)
    mk = np.diff(y) / hk
    d = np.zeros_like(y)
    w1, w2 = 2 * hk[1:] + hk[:-1], hk[1:] + 2 * hk[:-1]
    rising = (mk[:-1] > 0) & (mk[1:] > 0)
    with np.errstate(divide="ignore"):
        d[1:-1] = np.where(rising, (w1 + w2) / (w1 / mk[:-1] + w2 / mk[1:]), 0.0)
    d[0] = mk[0]
    return d


def _hermite(x, x0, dx, y0, y1, d0, d1) -> tuple[np.ndarray, np.ndarray]:
    """Cubic Hermite piece on [x0, x0 + dx]: value and derivative at x."""
    t = (x - x0) / dx
    a2 = 3 * (y1 - y0) - dx * (2 * d0 + d1)
    a3 = 2 * (y0 - y1) + dx * (d0 + d1)
    value = y0 + t * (dx * d0 + t * (a2 + t * a3))
    return value, d0 + t * (2 * a2 + 3 * t * a3) / dx


def polarization(h: np.ndarray, h_tab: np.ndarray, j: np.ndarray, dj: np.ndarray, k=None):
    """J and dJ/dH at 0 <= h <= h_tab[-1], on knot interval k (searched if None)."""
    if k is None:
        k = np.clip(np.searchsorted(h_tab, h, side="right") - 1, 0, h_tab.size - 2)
    return _hermite(h, h_tab[k], h_tab[k + 1] - h_tab[k], j[k], j[k + 1], dj[k], dj[k + 1])


def tabulate(h: np.ndarray, b: np.ndarray) -> Curve:
    """Build the nu(b_sq) table of a checked stack curve."""
    j = b - MU0 * h
    dj = _pchip_slopes(h, j)
    dj[-1] = 0.0
    # H at equally spaced B: bisection on the knot interval holding each B (B(H) is
    # strictly increasing); 64 halvings take any interval below rounding.
    bn = np.linspace(0.0, b[-1], _TABLE_NODES)
    k = np.clip(np.searchsorted(b, bn, side="right") - 1, 0, h.size - 2)
    lo, hi = h[k].copy(), h[k + 1].copy()
    for _ in range(64):
        mid = 0.5 * (lo + hi)
        below = MU0 * mid + polarization(mid, h, j, dj, k)[0] < bn
        lo, hi = np.where(below, mid, lo), np.where(below, hi, mid)
    hn = 0.5 * (lo + hi)
    hn[-1] = h[-1]
    dh_db = 1.0 / (MU0 + polarization(hn, h, j, dj, k)[1])
    s = bn**2
    nu = np.r_[dh_db[0], hn[1:] / bn[1:]]  # lim H/B at B -> 0 is dH/dB(0)
    # d nu/d(b_sq) = (dH/dB - nu) / (2 B^2); at B = 0 the secant of the first piece
    dnu = np.r_[(nu[1] - nu[0]) / s[1], (dh_db[1:] - nu[1:]) / (2.0 * s[1:])]
    ds = np.diff(s)
    m0, m1 = ds * dnu[:-1], ds * dnu[1:]
    c = (nu[:-1], m0, 3 * np.diff(nu) - 2 * m0 - m1, -2 * np.diff(nu) + m0 + m1)
    # w = integral of nu/2 d(b_sq): w(t) = w_i + ds/2 sum_p c_p t^(p+1) / (p + 1)
    w_int = [0.5 * ds * c[p] / (p + 1) for p in range(4)]
    w_nodes = np.r_[0.0, np.cumsum(sum(w_int))]
    curve = Curve(
        j, dj, 1 / bn[1], s, 1 / ds, c, (c[1] / ds, 2 * c[2] / ds, 3 * c[3] / ds),
        (w_nodes[:-1], *w_int), b[-1], h[-1], j[-1], w_nodes[-1],
    )  # fmt: skip
    bf = np.linspace(0.0, b[-1], 4 * _TABLE_NODES)
    if np.any(np.diff(bf * evaluate_pieces(curve, bf**2, curve.nu_c)[0]) <= 0):
        raise MaterialError("B-H curve too steep to tabulate: H(B) is not increasing")
    return curve


def evaluate_pieces(c: Curve, s: np.ndarray,
                    *coef_sets: tuple[np.ndarray, ...]) -> list[np.ndarray]:
    """Horner sums of piece coefficient sets at 1-D b_sq values s >= 0 (or NaN).

    Works in chunks of _CHUNK values: small temporaries stay in cache and are recycled by
    the allocator, about twice as fast as whole-array temporaries at 50k values.
    """
    outs = [np.empty_like(s) for _ in coef_sets]
    for lo in range(0, s.size, _CHUNK):
        sc = s[lo : lo + _CHUNK]
        k = np.sqrt(sc)
        k *= c.inv_b_step
        np.fmin(k, c.s.size - 2.0, out=k)  # fmin: a NaN gets a valid piece, stays in t
        k = k.astype(np.intp)
        t = sc - c.s.take(k)
        t *= c.inv_ds.take(k)
        for coefs, out in zip(coef_sets, outs, strict=True):
            acc = coefs[-1].take(k)
            for a in coefs[-2::-1]:
                acc *= t
                acc += a.take(k)
            out[lo : lo + _CHUNK] = acc
    return outs
