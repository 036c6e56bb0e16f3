"""The order in which the exact searches decide the units (a joint, or a group of joints
sharing one actuator): influencers first for the payload (:func:`search_order`), and for other
objectives the units that move the root's bound the most first (:func:`spread_order`). Any
order gives the same proofs; the order only decides how soon (docs/optimizer.md, "Order and
leaves")."""

from __future__ import annotations

import math
import time

import numpy as np

from .model import SizingModel, unit_options


def search_order(model: SizingModel, units: list[tuple]) -> list[tuple]:
    """Units (groups of joints decided together) ordered so that influencers come first.

    Joint j is influenced by actuator k when k's mass loads j in some payload case
    (G[k, j] ≠ 0). Kahn's order on that graph; among the ready units the one loaded by the most
    assigned units goes first (so a leg is finished before the next is started and its cases'
    bounds become exact early), then the one loading the most, then fewer candidates; on a
    cycle the unit with the fewest unassigned influencers goes next.
    """
    n = model.n
    infl = np.zeros((n, n), dtype=bool)
    for t in model.payload:
        infl |= np.abs(t.G) > 1e-12 * (np.abs(t.G).max() + 1e-300)
    np.fill_diagonal(infl, False)
    left = list(units)
    done = np.zeros(n, dtype=bool)
    out = []
    while left:

        def waiting(u):
            cols = infl[:, list(u)].any(axis=1)
            cols[list(u)] = False
            return int(np.count_nonzero(cols & ~done))

        def reach(u):
            return int(np.count_nonzero(infl[list(u)].any(axis=0) & ~done))

        def linked(u):  # assigned units that load u: finish one component before the next
            return int(np.count_nonzero(infl[:, list(u)].any(axis=1) & done))

        u = min(
            left, key=lambda u: (waiting(u), -linked(u), -reach(u), model.candidates[u[0]].size, u)
        )
        out.append(u)
        left.remove(u)
        done[list(u)] = True
    return out


#: share of the time limit the root spreads of :func:`spread_order` may take
SPREAD_SHARE = 0.05
#: options bounded at once by :func:`spread_order` (the clock is read between pieces)
SPREAD_CHUNK = 65_536


def spread_order(
    model: SizingModel, order: list[tuple], deadline: float = math.inf, st: dict | None = None
):
    """For an objective other than the payload: the units whose option moves the root's bound
    on the objective the most go first (the rest keep ``order``, a stable sort).

    The bound of a partial design is loose while the units that move the objective are free,
    and the payload order (:func:`search_order`) can leave such a unit to the last level, where
    every node below its siblings is visited before its choice is seen: on the bundled arm the
    least effective mass at the largest payload depends almost only on the shoulder's yaw joint,
    the last in the payload order (measured: docs/benchmarks.md). The spread of a unit is the
    range of the root bounds of its options that survive the root's cuts; the order only
    changes how soon the search proves, never what it proves. Past ``deadline`` the order is
    kept as it is.
    """
    if model.kind == "payload" or len(order) < 2:
        return order
    spread = root_spreads(model, order, deadline, st)
    return order if spread is None else sorted(order, key=lambda u: -spread[u])


def root_spreads(
    model: SizingModel, units: list[tuple], deadline: float = math.inf, st: dict | None = None
):
    """Per unit, the range of the root bounds on the objective over its options that survive
    the root's cuts (0 when fewer than two bounds are finite); None past ``deadline``.
    ``st``: the statistics of the model's candidates, when already computed."""
    root = np.full(model.n, -1, dtype=np.int64)
    st = model.stats(model.candidates) if st is None else st
    spread = {}
    for u in units:
        opts = unit_options(model.candidates, u)
        lo, hi = math.inf, -math.inf
        for s in range(0, opts.size, SPREAD_CHUNK):
            if time.perf_counter() > deadline:
                return None
            piece = opts[s : s + SPREAD_CHUNK]
            b = model.child_bounds(root, u, piece, st)
            rows = np.flatnonzero(b["ok"])
            if rows.size:
                sub = {"objective": b["objective"][rows]}
                good = model.costly_ok(root, u, piece[rows], st, sub)
                vals = sub["objective"][good]
                vals = vals[np.isfinite(vals)]
                if vals.size:
                    lo, hi = min(lo, float(vals.min())), max(hi, float(vals.max()))
        spread[u] = hi - lo if hi >= lo else 0.0
    return spread
