"""Small dense linear algebra over leading batch dimensions, and the input checks the metrics share.

Stacks of tiny matrices (2×2, 3×3, the 9×9 mass matrix of a floating-base leg) are where generic
``np.linalg`` spends most of its time on per-matrix overhead. The functions here write the
arithmetic once per matrix *entry* instead: every entry is a numpy array over the batch
(designs, poses), so one Python-level operation serves every design and pose at once.

Two representations are used:

* arrays shaped ``(..., r, c)`` — the public interface;
* *entry lists*: a list of ``r`` lists of ``c`` arrays (each shaped like the batch, possibly
  broadcastable against the others), built by :func:`entries` and stacked back by
  :func:`stack_entries`. The ``*_entries`` functions work on this form so that chained steps
  (factorization, substitution, Gram products, determinants) never gather and scatter arrays.

``np.linalg`` is the reference these are tested against (agreement to 1e-10, relative).
"""

from __future__ import annotations

import math
from typing import cast

import numpy as np

from ..errors import InputError

#: the ``file`` part of an InputError raised for values passed in Python
API = "<api>"

#: batch items handled per chunk by :func:`map_chunks` (fits the per-entry arrays in cache)
CHUNK = 8192

#: largest matrix order factorized entry by entry; larger ones go to ``np.linalg``
ENTRY_MAX = 16


# --------------------------------------------------------------------------------------------
# entry lists
# --------------------------------------------------------------------------------------------
def entries(a: np.ndarray) -> list[list[np.ndarray]]:
    """Split ``a`` (..., r, c) into an entry list: ``e[i][j] = a[..., i, j]`` (views)."""
    return [[a[..., i, j] for j in range(a.shape[-1])] for i in range(a.shape[-2])]


def stack_entries(e: list[list[np.ndarray]]) -> np.ndarray:
    """Stack an entry list back into an array (..., r, c), broadcasting the entries."""
    flat = np.broadcast_arrays(*[np.asarray(x, dtype=float) for row in e for x in row])
    rows, cols = len(e), len(e[0])
    return np.stack(flat, axis=-1).reshape(flat[0].shape + (rows, cols))


def det_entries(a: list[list[np.ndarray]]) -> np.ndarray:
    """Determinant of a 1×1, 2×2 or 3×3 entry list by cofactor expansion."""
    k = len(a)
    if k == 1:
        return a[0][0]
    if k == 2:
        return a[0][0] * a[1][1] - a[0][1] * a[1][0]
    if k == 3:
        c0 = a[1][1] * a[2][2] - a[1][2] * a[2][1]
        c1 = a[1][2] * a[2][0] - a[1][0] * a[2][2]
        c2 = a[1][0] * a[2][1] - a[1][1] * a[2][0]
        return a[0][0] * c0 + a[0][1] * c1 + a[0][2] * c2
    raise ValueError(f"closed-form determinant is for order 1 to 3, got {k}")


def adjugate_entries(a: list[list[np.ndarray]]) -> list[list[np.ndarray]]:
    """Adjugate (transposed cofactors) of a 1×1, 2×2 or 3×3 entry list: A·adj(A) = det(A)·I."""
    k = len(a)
    if k == 1:
        return [[np.ones_like(np.asarray(a[0][0], dtype=float))]]
    if k == 2:
        return [[a[1][1], -a[0][1]], [-a[1][0], a[0][0]]]
    if k == 3:
        (a00, a01, a02), (a10, a11, a12), (a20, a21, a22) = a
        return [
            [a11 * a22 - a12 * a21, a02 * a21 - a01 * a22, a01 * a12 - a02 * a11],
            [a12 * a20 - a10 * a22, a00 * a22 - a02 * a20, a02 * a10 - a00 * a12],
            [a10 * a21 - a11 * a20, a01 * a20 - a00 * a21, a00 * a11 - a01 * a10],
        ]
    raise ValueError(f"closed-form adjugate is for order 1 to 3, got {k}")


def cholesky_entries(h: list[list[np.ndarray]]) -> tuple[list[list[np.ndarray]], np.ndarray]:
    """Lower Cholesky factor L (H = L·Lᵀ) of a symmetric entry list (lower triangle read).

    Returns ``(L, positive)``; ``positive`` is False where a pivot is ≤ 0 (H not positive
    definite). There the pivot is replaced by 1 so that no NaN spreads; the caller must act on
    the mask. Ordering matters: for H = [[H_bb, H_bj], [H_jb, H_jj]] the trailing block of L
    satisfies L_jj·L_jjᵀ = H_jj − H_jb·H_bb⁻¹·H_bj (the Schur complement of the leading block).
    """
    n = len(h)
    low: list[list[np.ndarray]] = [[np.zeros(())] * n for _ in range(n)]
    positive = np.ones((), dtype=bool)
    for j in range(n):
        s = h[j][j]
        for k in range(j):
            s = s - low[j][k] * low[j][k]
        good = s > 0.0
        positive = positive & good
        d = np.sqrt(np.where(good, s, 1.0))
        low[j][j] = d
        inv = 1.0 / d
        for i in range(j + 1, n):
            s = h[i][j]
            for k in range(j):
                s = s - low[i][k] * low[j][k]
            low[i][j] = s * inv
    return low, positive


def forward_entries(
    low: list[list[np.ndarray]], b: list[list[np.ndarray]]
) -> list[list[np.ndarray]]:
    """Solve L·W = B by forward substitution (L lower triangular, B an n×c entry list)."""
    n, c = len(low), len(b[0])
    inv_diag = [1.0 / low[i][i] for i in range(n)]
    w: list[list[np.ndarray]] = [[np.zeros(())] * c for _ in range(n)]
    for col in range(c):
        for i in range(n):
            s = b[i][col]
            for k in range(i):
                s = s - low[i][k] * w[k][col]
            w[i][col] = s * inv_diag[i]
    return w


def gram_entries(w: list[list[np.ndarray]]) -> list[list[np.ndarray]]:
    """Wᵀ·W of an r×c entry list (symmetric c×c result; each entry computed once)."""
    c = len(w[0])
    g: list[list[np.ndarray]] = [[np.zeros(())] * c for _ in range(c)]
    for a in range(c):
        for b in range(a, c):
            s = w[0][a] * w[0][b]
            for row in w[1:]:
                s = s + row[a] * row[b]
            g[a][b] = s
            g[b][a] = s
    return g


def quad_entries(a: list[list[np.ndarray]], x: list[np.ndarray]) -> np.ndarray:
    """xᵀ·A·x for a square entry list A and an entry vector x."""
    k = len(x)
    total: np.ndarray = np.zeros(())
    for i in range(k):
        row = a[i][0] * x[0]
        for j in range(1, k):
            row = row + a[i][j] * x[j]
        total = total + x[i] * row
    return total


# --------------------------------------------------------------------------------------------
# array interface
# --------------------------------------------------------------------------------------------
def det_small(a: np.ndarray) -> np.ndarray:
    """Determinant of stacked 1×1, 2×2 or 3×3 matrices by cofactor expansion.

    Parameters
    ----------
    a : array (..., k, k), k ≤ 3

    Returns
    -------
    array (...)
        det(A), in the product of the units of one entry per row.
    """
    a = np.asarray(a, dtype=float)
    return det_entries(entries(a))


def inv_small(a: np.ndarray) -> np.ndarray:
    """Inverse of stacked 1×1, 2×2 or 3×3 matrices, A⁻¹ = adj(A)/det(A).

    No pivoting and no check: a singular matrix gives ``inf`` or NaN entries, so test
    :func:`det_small` first where singular input is possible.

    Parameters
    ----------
    a : array (..., k, k), k ≤ 3

    Returns
    -------
    array (..., k, k)
    """
    a = np.asarray(a, dtype=float)
    e = entries(a)
    det = det_entries(e)
    adj = adjugate_entries(e)
    with np.errstate(divide="ignore", invalid="ignore"):
        return stack_entries([[x / det for x in row] for row in adj])


def whiten(h: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """W = L⁻¹·B where H = L·Lᵀ is the Cholesky factorization of a symmetric positive definite H.

    Then Bᵀ·H⁻¹·B = Wᵀ·W, which is how task-space inertias are formed here.

    Parameters
    ----------
    h : array (..., n, n), symmetric positive definite
    b : array (..., n, c)

    Returns
    -------
    w : array (..., n, c)
    valid : bool array (...)
        False where H is not symmetric (to 1e-8 of its largest diagonal entry) or not positive
        definite; W is meaningless there.
    """
    w_entries, valid = whiten_entries(h, b)
    w = stack_entries(w_entries)
    return w, np.broadcast_to(valid, w.shape[:-2])


def whiten_entries(h: np.ndarray, b: np.ndarray) -> tuple[list[list[np.ndarray]], np.ndarray]:
    """:func:`whiten` returning W as an entry list (no stacking; for chained entry arithmetic)."""
    h = np.asarray(h, dtype=float)
    b = np.asarray(b, dtype=float)
    symmetric = is_symmetric(h)
    if h.shape[-1] <= ENTRY_MAX:
        low, positive = cholesky_entries(entries(h))
        return forward_entries(low, entries(b)), positive & symmetric
    batch = np.broadcast_shapes(h.shape[:-2], b.shape[:-2])
    h = np.broadcast_to(h, batch + h.shape[-2:])
    valid = (np.linalg.eigvalsh(h)[..., 0] > 0.0) & symmetric
    factor = np.linalg.cholesky(np.where(valid[..., None, None], h, np.eye(h.shape[-1])))
    return entries(np.linalg.solve(factor, np.broadcast_to(b, batch + b.shape[-2:]))), valid


def is_symmetric(h: np.ndarray, rtol: float = 1e-8) -> np.ndarray:
    """True per matrix where max |H − Hᵀ| ≤ rtol · max |diag H| (shape ``h.shape[:-2]``)."""
    n = h.shape[-1]
    if n == 1:
        return np.ones(h.shape[:-2], dtype=bool)
    upper, lower = np.triu_indices(n, 1)
    flat = h.reshape(h.shape[:-2] + (n * n,))
    asym = np.abs(flat[..., upper * n + lower] - flat[..., lower * n + upper]).max(axis=-1)
    return asym <= rtol * np.abs(flat[..., :: n + 1]).max(axis=-1)


def require_spd(valid: np.ndarray, name: str) -> None:
    """Raise InputError unless every entry of the ``valid`` mask from :func:`whiten` is True."""
    if not np.all(valid):
        raise InputError(
            API,
            name,
            "must be a symmetric positive definite mass matrix (symmetric to 1e-8 of its "
            "largest diagonal entry) in every batch item",
        )


def map_chunks(fn, arrays, core_ndims, out_core_ndims, chunk: int | None = None):
    """Apply ``fn`` to slices of the leading batch axis and concatenate the outputs.

    Inputs keep numpy broadcasting: only arrays that carry the full batch rank and a leading
    extent above one are sliced; the others are passed whole. Each output is broadcast to the
    chunk's batch shape before concatenation.

    Parameters
    ----------
    fn : callable(*arrays) -> tuple of arrays (or None entries, passed through as None)
    arrays : sequence of arrays or None
    core_ndims : sequence of int, trailing (non-batch) dimensions of each input
    out_core_ndims : sequence of int, trailing dimensions of each output
    chunk : int, batch items per call (default :data:`CHUNK`)
    """
    chunk = CHUNK if chunk is None else chunk
    shapes = [
        a.shape[: a.ndim - k] for a, k in zip(arrays, core_ndims, strict=True) if a is not None
    ]
    batch = np.broadcast_shapes(*shapes)
    if len(batch) == 0 or batch[0] <= 1 or math.prod(batch) <= chunk:
        outs = fn(*arrays)
        return tuple(_fit(o, batch, k) for o, k in zip(outs, out_core_ndims, strict=True))
    step = max(1, chunk // max(1, math.prod(batch[1:])))
    pieces: list[list[np.ndarray | None]] = [[] for _ in out_core_ndims]
    for start in range(0, batch[0], step):
        sl = slice(start, min(start + step, batch[0]))
        sub = batch[1:]
        args = []
        for a, k in zip(arrays, core_ndims, strict=True):
            full = a is not None and a.ndim - k == len(batch) and a.shape[0] > 1
            args.append(a[sl] if full else a)
        outs = fn(*args)
        for p, o, k in zip(pieces, outs, out_core_ndims, strict=True):
            p.append(_fit(o, (sl.stop - sl.start,) + sub, k))
    return tuple(
        None if p[0] is None else np.concatenate(cast(list[np.ndarray], p), axis=0) for p in pieces
    )


def _fit(o, batch, core):
    if o is None:
        return None
    o = np.asarray(o)
    shape = tuple(batch) + (o.shape[o.ndim - core :] if core else ())
    return np.array(np.broadcast_to(o, shape))


# --------------------------------------------------------------------------------------------
# input checks shared by the metric functions
# --------------------------------------------------------------------------------------------
def checked(value, name: str, core: int, *, allow_inf: bool = False) -> np.ndarray:
    """``value`` as a float array with at least ``core`` trailing dimensions, all finite.

    Parameters
    ----------
    value : array_like
    name : str, argument name used in the error message
    core : int, number of trailing (matrix or vector) dimensions required
    allow_inf : bool, accept ±inf (never NaN)

    Raises
    ------
    InputError
        Not numeric, too few dimensions, NaN, or infinite where not allowed.
    """
    try:
        a = np.asarray(value, dtype=float)
    except (TypeError, ValueError) as exc:
        raise InputError(API, name, f"must be an array of numbers ({exc})") from None
    if a.ndim < core:
        raise InputError(API, name, f"must have at least {core} dimensions, got shape {a.shape}")
    if np.isnan(a).any():
        raise InputError(API, name, "must not contain NaN")
    if not allow_inf and np.isinf(a).any():
        raise InputError(API, name, "must be finite")
    return a


def check_size(a: np.ndarray, name: str, axis: int, size: int, what: str) -> None:
    """Raise InputError unless ``a.shape[axis] == size``."""
    if a.shape[axis] != size:
        raise InputError(API, name, f"must have {size} {what} on axis {axis}, got shape {a.shape}")


def batch_shape(**named: tuple[np.ndarray | None, int]) -> tuple[int, ...]:
    """Broadcast batch shape of named ``(array, core_ndim)`` pairs, or InputError naming them."""
    items = {k: (a, n) for k, (a, n) in named.items() if a is not None}
    try:
        return np.broadcast_shapes(*[a.shape[: a.ndim - k] for a, k in items.values()])
    except ValueError:
        shapes = ", ".join(f"{k} {a.shape}" for k, (a, _) in items.items())
        raise InputError(
            API, "/".join(items), f"leading batch dimensions must broadcast, got {shapes}"
        ) from None


def unit_vectors(u, name: str, size: int) -> np.ndarray:
    """``u`` (..., size) normalized to unit length; InputError for a zero or wrong-sized vector."""
    u = checked(u, name, 1)
    check_size(u, name, -1, size, "components")
    norm = np.linalg.norm(u, axis=-1, keepdims=True)
    if (norm == 0.0).any():
        raise InputError(API, name, "must be a nonzero direction vector")
    return u / norm


def symmetric_positive(h: np.ndarray, name: str) -> None:
    """Raise InputError naming the first batch item of ``h`` that is not symmetric positive
    definite (whole-array check, for small inputs that skip :func:`whiten`)."""
    bad = ~is_symmetric(h)
    if not bad.any():
        ev = np.linalg.eigvalsh(h)
        bad = ~(ev[..., 0] > 0.0)
    if bad.any():
        idx = tuple(int(i) for i in np.argwhere(bad)[0])
        raise InputError(
            API, name, f"must be symmetric positive definite; not at batch index {idx}"
        )
