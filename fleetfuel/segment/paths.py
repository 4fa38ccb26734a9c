r"""Path similarity of journeys: overlap of the grid cells they drive through, and in which heading.

Each journey's fixes are densified along its path (a point every quarter cell; slow loggers leave
hundreds of metres between fixes) in one east/north plane for the whole fleet (equirectangular
about the fleet's mean latitude :math:`\varphi_0`: :math:`x = R\cos\varphi_0\,\Delta\lambda`,
:math:`y = R\,\Delta\varphi`). Every step of the densified path yields a *token*: its grid cell
(``cfg.path_cell_m`` square) and its heading sector (``cfg.path_heading_sectors`` equal sectors of
360 degrees; of 180 degrees when ``cfg.direction_agnostic``, so a road driven either way gives the
same token). Two journeys are neighbours when the Jaccard overlap of their token sets,
:math:`|A \cap B| / |A \cup B|`, is at least ``cfg.path_min_overlap`` and the shorter is at least
``cfg.path_min_length_ratio`` of the longer (a bus line crossing a delivery district is a subset
of the round's cells, not the round). Routes are the connected
components of that neighbourhood graph within each end-place pair: DBSCAN with ``min_samples = 1``
on the Jaccard distance (Ester et al. 1996), computed with scipy's sparse graph routines so that
memory grows with the number of overlapping pairs, not with the square of the journeys.

The overlap is indifferent to the order in which a round visits its streets (delivery rounds vary
day by day) and, with headings, tells a loop driven clockwise from the same loop anticlockwise
(different climbs, different fuel).

References
----------
Jaccard, P. (1901). Etude comparative de la distribution florale dans une portion des Alpes et du
    Jura. Bulletin de la Societe Vaudoise des Sciences Naturelles 37, 547-579 (the overlap index).
Ester, M., Kriegel, H.-P., Sander, J. & Xu, X. (1996). Proc. KDD-96, 226-231 (DBSCAN).
"""

from __future__ import annotations

from typing import Final

import numpy as np
import pandas as pd
from scipy import sparse
from scipy.sparse.csgraph import connected_components

from fleetfuel import schema
from fleetfuel.constants import WGS84_MEAN_RADIUS_M
from fleetfuel.segment._frame import FloatArray, IntArray, float_column, group_starts
from fleetfuel.segment.config import SegmentConfig

DENSIFY_PER_CELL: Final = 4
"""Densified points per cell length: no cell along the path is skipped (sampling theorem, x2)."""
PAIR_BLOCK: Final = 250_000
"""Journey pairs evaluated per block of the overlap product (bounds memory). Measured on 3000
journeys of one end-place pair, all overlapping: blocks of 4 M pairs and 2 M pairs kept took
395 MiB more than the token matrix, 250 k and 250 k took 11 MiB, in the same time (1.8-2.4 s)."""
EDGE_BUDGET: Final = 250_000
"""Neighbour pairs kept before they are reduced to their components' spanning stars (bounds
memory: a route driven every day has neighbours in the square of its journeys)."""
CELL_OFFSET: Final = 1 << 23
"""Offset of the east and north cell numbers in a packed token (:func:`token_matrix`)."""


def plane_origin(lat_deg: FloatArray, lon_deg: FloatArray) -> tuple[float, float]:
    """Origin of the fleet's east/north plane: mean latitude and first longitude of the journeys'
    end points (finite ones), in radians; (0, 0) when there is none."""
    lat, lon = np.asarray(lat_deg, dtype=np.float64), np.asarray(lon_deg, dtype=np.float64)
    ok = np.isfinite(lat) & np.isfinite(lon)
    if not ok.any():
        return 0.0, 0.0
    return float(np.radians(np.mean(lat[ok]))), float(np.radians(lon[ok][0]))


def _plane(rows: pd.DataFrame, origin: tuple[float, float]) -> tuple[FloatArray, FloatArray]:
    lat = np.radians(float_column(rows, schema.LAT_DEG))
    lon = np.radians(float_column(rows, schema.LON_DEG))
    lat0, lon0 = origin
    dlon = np.angle(np.exp(1j * (lon - lon0)))  # wrapped to (-pi, pi]
    return WGS84_MEAN_RADIUS_M * np.cos(lat0) * dlon, WGS84_MEAN_RADIUS_M * (lat - lat0)


def _densified(x: FloatArray, y: FloatArray, codes: IntArray, spacing_m: float):
    """Points every ``spacing_m`` along each journey's path (and its last point); journey codes."""
    first = group_starts(codes)
    step = np.hypot(np.diff(x, prepend=x[0]), np.diff(y, prepend=y[0]))
    step[first] = 0.0
    keep = first | (step > 0)
    x, y, codes, step, first = x[keep], y[keep], codes[keep], step[keep], first[keep]
    gap = 2 * spacing_m  # journeys lie apart on the common length axis, so interpolation never mixes them
    length = np.cumsum(np.where(first, gap, step))
    start = length[first]
    end = np.r_[length[np.flatnonzero(first)[1:] - 1], length[-1]]
    count = np.floor((end - start) / spacing_m).astype(np.int64) + 2
    journey = np.repeat(np.arange(start.size), count)
    offset = np.arange(count.sum()) - np.repeat(np.cumsum(count) - count, count)
    target = np.minimum(start[journey] + offset * spacing_m, end[journey])
    return np.interp(target, length, x), np.interp(target, length, y), codes[first][journey]


def journey_cells(
    rows: pd.DataFrame, codes: IntArray, n: int, origin: tuple[float, float], cfg: SegmentConfig
) -> tuple[IntArray, IntArray]:
    """Each journey's tokens (grid cell and heading sector, see the module docstring), once each.

    Parameters
    ----------
    rows : DataFrame
        Fixes (``lat_deg``, ``lon_deg`` finite) in time order, grouped by journey.
    codes : ndarray of int
        Journey index (0..n-1) of each row, non-decreasing.
    n : int
        Number of journeys.
    origin : (float, float)
        The plane's origin (:func:`plane_origin`), the same for every journey of the fleet. [rad]
    cfg : SegmentConfig
        ``path_cell_m``, ``path_heading_sectors``, ``direction_agnostic``.

    Returns
    -------
    journey : ndarray of int
        Journey index of each token.
    cells : ndarray of int, shape (tokens, 3)
        East cell, north cell, heading sector (``cfg.path_heading_sectors`` for a journey that
        never moved: its first point). Sorted by journey, then cell.
    """
    if not len(rows):
        return np.zeros(0, dtype=np.int64), np.zeros((0, 3), dtype=np.int64)
    x, y = _plane(rows, origin)
    px, py, journey = _densified(x, y, codes, cfg.path_cell_m / DENSIFY_PER_CELL)
    same = np.r_[False, journey[1:] == journey[:-1]]
    dx, dy = np.diff(px, prepend=px[0]), np.diff(py, prepend=py[0])
    moves = same & (np.hypot(dx, dy) > 0)
    span = np.pi if cfg.direction_agnostic else 2 * np.pi
    sector = np.floor(np.mod(np.arctan2(dy, dx), span) / span * cfg.path_heading_sectors).astype(np.int64)
    sector = np.where(moves, np.minimum(sector, cfg.path_heading_sectors - 1), cfg.path_heading_sectors)
    moved = np.bincount(journey[moves], minlength=n) > 0
    use = moves | (~same & ~moved[journey])  # steps; a journey that never moved: its first point
    table = np.column_stack([journey, np.floor(px / cfg.path_cell_m), np.floor(py / cfg.path_cell_m), sector])[use]
    unique = np.unique(table.astype(np.int64), axis=0)
    return unique[:, 0], unique[:, 1:]


def token_matrix(journey: IntArray, cells: IntArray, n: int) -> sparse.csr_matrix:
    """Binary journey x token matrix of :func:`journey_cells` (tokens numbered in order of first use)."""
    cells = np.asarray(cells, dtype=np.int64)
    # One int64 per token (east and north cells offset into 24 bits each, the sector into 8): the
    # same first-use order as factorizing the triples, at a fraction of a MultiIndex's memory.
    east, north = cells[:, 0] + CELL_OFFSET, cells[:, 1] + CELL_OFFSET
    if cells.size and (min(east.min(), north.min()) < 0 or max(east.max(), north.max()) >= 2 * CELL_OFFSET
                       or cells[:, 2].min() < 0 or cells[:, 2].max() > 255):
        raise ValueError("path cells beyond the packed token range (+-8.4 million cells, 255 sectors)")
    token, uniques = pd.factorize((east << 32) | (north << 8) | cells[:, 2])
    matrix = sparse.csr_matrix(
        (np.ones(token.size, dtype=np.int32), (journey, token)), shape=(n, len(uniques))
    )
    matrix.data[:] = 1  # duplicates summed by the constructor: back to a set
    return matrix


def _components(i: IntArray, j: IntArray, n: int) -> IntArray:
    """Connected-component label of each of ``n`` nodes joined by the edges ``(i, j)``."""
    graph = sparse.coo_matrix((np.ones(i.size, dtype=np.float32), (i, j)), shape=(n, n)).tocsr()
    return connected_components(graph, directed=False)[1]


def _spanning(i: IntArray, j: IntArray, n: int) -> tuple[IntArray, IntArray]:
    """Edges with the connected components of edges ``(i, j)`` among ``n`` nodes, one per node
    beyond the first of each component (a star on its lowest node)."""
    labels = _components(i, j, n)
    first = np.full(labels.max(initial=-1) + 1, n, dtype=np.int64)
    np.minimum.at(first, labels, np.arange(n))
    root = first[labels]
    star = np.flatnonzero(root != np.arange(n))
    return star, root[star]


def overlap_clusters(
    tokens: sparse.csr_matrix, groups: IntArray, length_m: FloatArray, cfg: SegmentConfig
) -> IntArray:
    """Connected components of the Jaccard-overlap graph within each group (labels 0..K-1).

    Parameters
    ----------
    tokens : csr_matrix
        From :func:`token_matrix`.
    groups : ndarray of int
        Group of each journey (its end-place pair); journeys of different groups never join.
    length_m : ndarray
        Distance of each journey. [m] Neighbours also need ``shorter / longer >=
        cfg.path_min_length_ratio`` (a short run inside a long duty's area is not that duty).
    cfg : SegmentConfig
        ``path_min_overlap``, ``path_min_length_ratio``.
    """
    n = tokens.shape[0]
    sizes = np.asarray(tokens.sum(axis=1)).ravel().astype(np.float64)
    order = np.argsort(groups, kind="stable")
    bounds = np.flatnonzero(np.r_[True, groups[order][1:] != groups[order][:-1], True])
    rows_out: list[IntArray] = [np.zeros(0, dtype=np.int64)]
    cols_out: list[IntArray] = [np.zeros(0, dtype=np.int64)]
    kept = 0
    for lo, hi in zip(bounds[:-1], bounds[1:], strict=True):
        members = order[lo:hi]
        block = max(1, PAIR_BLOCK // members.size)
        sub = tokens[members]
        for start in range(0, members.size, block):
            inter = (sub[start : start + block] @ sub.T).tocoo()
            i, j = members[start + inter.row], members[inter.col]
            union = sizes[i] + sizes[j] - inter.data
            short, long = np.minimum(length_m[i], length_m[j]), np.maximum(length_m[i], length_m[j])
            near = (inter.data >= cfg.path_min_overlap * union) & (short >= cfg.path_min_length_ratio * long)
            rows_out.append(i[near])
            cols_out.append(j[near])
            kept += int(near.sum())
            if kept > EDGE_BUDGET + n:  # same components, at most n - 1 edges
                star = _spanning(np.concatenate(rows_out), np.concatenate(cols_out), n)
                rows_out, cols_out, kept = [star[0]], [star[1]], star[0].size
    labels = _components(np.concatenate(rows_out), np.concatenate(cols_out), n)
    codes, _ = pd.factorize(labels)  # in order of first journey
    return codes.astype(np.int64)
