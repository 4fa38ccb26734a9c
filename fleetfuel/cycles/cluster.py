r"""Duty-cycle types: k-means over the micro-trip feature table, number of types by silhouette.

Input is the micro-trip feature table of :func:`fleetfuel.segment.microtrip_features`, one row per
micro-trip. Clustering features (:data:`CLUSTER_FEATURES`), chosen to be observable on any
logging rate (no acceleration-mode statistic, which low-rate logs lack):

========================== ======= ==================================================
column                     unit    why
========================== ======= ==================================================
``mean_running_speed_m_s`` m/s     road class (urban, rural, motorway)
``max_speed_m_s``          m/s     speed limit reached
``idle_share``             1       queueing, stop dwell
``pke_m_s2``               m/s^2   stop-and-go intensity (Hung et al. 2007)
``mean_abs_grade``         1       hilly versus flat
``log10_distance_m``       log m   micro-trip length: stops per km of the drive
========================== ======= ==================================================

Model (:class:`DutyTypeClusterer`): a scikit-learn :class:`~sklearn.pipeline.Pipeline` of
:class:`~sklearn.preprocessing.StandardScaler`, :class:`~sklearn.decomposition.PCA` (keeping
``pca_variance`` of the variance) and :class:`~sklearn.cluster.KMeans`, fitted with a weight per
micro-trip (its distance by default: fuel follows distance, and distance weighting keeps the few
long motorway micro-trips from being outnumbered by thousands of short urban ones). For each
number of types :math:`k` in the range the silhouette (Rousseeuw 1987), weighted like the fit
(:func:`weighted_silhouette`), is computed on a seeded subsample; the silhouette tends to favour the
coarsest well-separated split, so we take the **largest** :math:`k` whose silhouette is within
``silhouette_tolerance`` (share) of the best, among the admissible ones (every type holds at least
``min_type_share`` of the weight). Types are numbered by increasing weighted mean of the first
feature (running speed): ``T1`` is the slowest.

A big fleet is fitted on a seeded uniform draw of at most ``fit_sample`` micro-trips, each
keeping its weight (:func:`fit_subsample`); every micro-trip is then typed by the fitted model, in
blocks of rows. The fit's memory and time stay bounded whatever the fleet size.

Rows with a missing feature (e.g. no elevation: grade unknown) are not fitted; they get the type
whose centroid is nearest in the scaled space over the features they have. Features missing on
every row are dropped. Deterministic: rows are sorted by ``microtrip_id`` before the fit and every
random draw is seeded, so the same table gives the same types, byte for byte.

References
----------
Rousseeuw, P. J. (1987). Silhouettes: a graphical aid to the interpretation and validation of
    cluster analysis. J. Comput. Appl. Math. 20, 53-65.
Hung, W. T. et al. (2007), Transportation Research Part D 12(2), 115-128 (PKE; from memory).
"""

from __future__ import annotations

from typing import Final

import numpy as np
import numpy.typing as npt
import pandas as pd
from sklearn.base import BaseEstimator, ClusterMixin
from sklearn.cluster import KMeans
from sklearn.decomposition import PCA
from sklearn.pipeline import Pipeline
from sklearn.preprocessing import StandardScaler
from threadpoolctl import threadpool_limits

from fleetfuel import schema
from fleetfuel.cycles.config import CyclesConfig

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]

CLUSTER_FEATURES: Final = (
    "mean_running_speed_m_s",
    "max_speed_m_s",
    "idle_share",
    "pke_m_s2",
    "mean_abs_grade",
    "log10_distance_m",
)
"""Columns of the clustering matrix (see the module docstring)."""

TYPE_PREFIX: Final = "T"
_CHUNK_ROWS: Final = 512  # rows of the distance matrix held at once in the silhouette
_PREDICT_ROWS: Final = 65_536  # rows typed at once (each step of the pipeline copies them)


def weighted_silhouette(z: FloatArray, labels: IntArray, weight: FloatArray) -> float:
    r"""Silhouette (Rousseeuw 1987) with a weight per point.

    :math:`a_i` is the weighted mean distance of point :math:`i` to the other points of its
    cluster, :math:`b_i` the smallest weighted mean distance to another cluster,
    :math:`s_i = (b_i - a_i) / \max(a_i, b_i)` (0 for a point alone in its cluster), and the result
    is :math:`\sum w_i s_i / \sum w_i`. With unit weights it equals
    :func:`sklearn.metrics.silhouette_score`. Distances are Euclidean, computed in row chunks.
    """
    k = int(labels.max()) + 1
    onehot = np.zeros((labels.size, k))
    onehot[np.arange(labels.size), labels] = 1.0
    mass = onehot * weight[:, None]
    total = mass.sum(axis=0)
    sums = np.empty((labels.size, k))
    sq = np.einsum("ij,ij->i", z, z)
    for start in range(0, labels.size, _CHUNK_ROWS):
        part = slice(start, start + _CHUNK_ROWS)
        d2 = sq[part, None] + sq[None, :] - 2 * z[part] @ z.T
        sums[part] = np.sqrt(np.maximum(d2, 0.0)) @ mass
    own = total[labels] - weight
    with np.errstate(invalid="ignore", divide="ignore"):
        a = sums[np.arange(labels.size), labels] / own
        other = np.where(onehot > 0, np.inf, sums / total[None, :])
    b = other.min(axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        s = np.where(own > 0, (b - a) / np.maximum(a, b), 0.0)
    s = np.nan_to_num(s, nan=0.0)
    return float(np.sum(weight * s) / np.sum(weight))


def by_microtrip(features: pd.DataFrame) -> pd.DataFrame:
    """``features`` sorted by ``microtrip_id`` (stable), with a fresh range index; a table already
    in that order (the work folder's) is not copied (copy-on-write: a later column assignment
    leaves the caller's frame as it was)."""
    ids = features[schema.MICROTRIP_ID]
    ordered = features if ids.is_monotonic_increasing else features.sort_values(schema.MICROTRIP_ID, kind="stable")
    return ordered.reset_index(drop=True)


def cluster_matrix(features: pd.DataFrame) -> pd.DataFrame:
    """The clustering matrix (:data:`CLUSTER_FEATURES`) of a micro-trip feature table.

    Same index as ``features``; NaN where a feature is not known. ``log10_distance_m`` is
    :math:`\\log_{10}(1 + d)` with :math:`d` the distance [m].
    """
    out = pd.DataFrame(index=features.index)
    for name in CLUSTER_FEATURES[:-1]:
        out[name] = features[name].to_numpy(dtype=np.float64, na_value=np.nan)
    out["log10_distance_m"] = np.log10(1.0 + features["distance_m"].to_numpy(dtype=np.float64, na_value=np.nan))
    return out


def fit_weight(features: pd.DataFrame, cfg: CyclesConfig) -> FloatArray:
    """Weight of each micro-trip in the fit (``cfg.cluster_weight``). [m, s or 1]"""
    if cfg.cluster_weight == "distance":
        return np.nan_to_num(features["distance_m"].to_numpy(dtype=np.float64, na_value=np.nan))
    if cfg.cluster_weight == "time":
        return np.nan_to_num(features["duration_s"].to_numpy(dtype=np.float64, na_value=np.nan))
    return np.ones(len(features))


class DutyTypeClusterer(ClusterMixin, BaseEstimator):
    """Scaled, PCA-reduced k-means with the number of clusters chosen by silhouette.

    Parameters
    ----------
    min_types, max_types : int
        Range of the number of clusters.
    silhouette_sample : int
        Size of the seeded uniform subsample the weighted silhouette is computed on.
    silhouette_tolerance : float
        Take the largest k whose silhouette is at least ``(1 - tolerance) * best``.
    pca_variance : float
        Variance share kept by PCA (1: no PCA step).
    n_init : int
        k-means restarts.
    min_type_share : float
        Every cluster must hold at least this share of the weight for its k to be admissible.
    random_state : int
        Seed.

    Attributes
    ----------
    n_types_ : int
        Number of clusters chosen.
    silhouettes_ : dict of int to float
        Silhouette of each admissible k (NaN: not admissible).
    pipeline_ : Pipeline
        The fitted scaler, PCA and k-means of ``n_types_``.
    order_ : ndarray of int
        ``order_[kmeans_label]`` is the type number (0-based, slowest first).
    centroids_ : ndarray, shape (n_types_, n_features)
        Weighted mean of each type's rows, in the input units.
    labels_ : ndarray of int
        Type number of each fitted row.
    """

    def __init__(
        self,
        *,
        min_types: int = 2,
        max_types: int = 8,
        silhouette_sample: int = 2000,
        silhouette_tolerance: float = 0.1,
        pca_variance: float = 0.95,
        n_init: int = 10,
        min_type_share: float = 0.01,
        random_state: int = 0,
    ) -> None:
        self.min_types = min_types
        self.max_types = max_types
        self.silhouette_sample = silhouette_sample
        self.silhouette_tolerance = silhouette_tolerance
        self.pca_variance = pca_variance
        self.n_init = n_init
        self.min_type_share = min_type_share
        self.random_state = random_state

    def _pipeline(self, k: int) -> Pipeline:
        steps: list[tuple[str, object]] = [("scale", StandardScaler())]
        if self.pca_variance < 1:
            steps.append(("pca", PCA(n_components=self.pca_variance, svd_solver="full")))
        steps.append(("kmeans", KMeans(n_clusters=k, n_init=self.n_init, random_state=self.random_state)))
        return Pipeline(steps)

    def fit(self, X: npt.ArrayLike, y: None = None, sample_weight: npt.ArrayLike | None = None) -> DutyTypeClusterer:
        """Fit every k of the range, keep the one chosen by the silhouette rule."""
        x = np.asarray(X, dtype=np.float64)
        if x.ndim != 2 or not np.all(np.isfinite(x)):
            raise ValueError(f"X must be a finite 2-D array, found shape {x.shape} with non-finite values")
        w = np.ones(len(x)) if sample_weight is None else np.asarray(sample_weight, dtype=np.float64)
        if w.shape != (len(x),) or np.any(w < 0) or not w.sum() > 0:
            raise ValueError("sample_weight must be non-negative, one per row, with a positive sum")
        hi = min(self.max_types, len(x) - 1)
        if hi < self.min_types:
            raise ValueError(f"need more than {self.min_types} rows to form {self.min_types} clusters, found {len(x)}")
        rng = np.random.default_rng(self.random_state)
        size = min(self.silhouette_sample, len(x))
        sub = np.sort(rng.choice(len(x), size=size, replace=False))
        fits: dict[int, Pipeline] = {}
        self.silhouettes_ = {}
        # One thread: k-means' OpenMP and BLAS pools oversubscribe small machines badly, and a
        # single thread keeps the sums in one order (same bytes on every run).
        with threadpool_limits(limits=1):
            for k in range(self.min_types, hi + 1):
                pipe = self._pipeline(k).fit(x, scale__sample_weight=w, kmeans__sample_weight=w)
                labels = pipe[-1].labels_
                shares = np.bincount(labels, weights=w, minlength=k) / w.sum()
                if shares.min() < self.min_type_share or np.unique(labels[sub]).size < 2:
                    self.silhouettes_[k] = float("nan")
                    continue
                z = pipe[:-1].transform(x[sub])
                self.silhouettes_[k] = weighted_silhouette(z, labels[sub], w[sub])
                if np.isfinite(self.silhouettes_[k]):
                    fits[k] = pipe
        if not fits:
            raise ValueError(
                f"{len(x)} micro-trips do not split into {self.min_types} to {hi} well-separated types "
                f"each holding at least {self.min_type_share:.0%} of the weight"
            )
        best = max(self.silhouettes_[k] for k in fits)
        self.n_types_ = max(k for k in fits if self.silhouettes_[k] >= (1 - self.silhouette_tolerance) * best)
        self.pipeline_ = fits[self.n_types_]
        raw = self.pipeline_[-1].labels_
        first = np.bincount(raw, weights=w * x[:, 0], minlength=self.n_types_)
        total = np.bincount(raw, weights=w, minlength=self.n_types_)
        self.order_ = np.argsort(np.argsort(first / total, kind="stable"), kind="stable")
        self.labels_ = self.order_[raw]
        self.centroids_ = np.stack(
            [np.average(x[self.labels_ == k], axis=0, weights=w[self.labels_ == k]) for k in range(self.n_types_)]
        )
        return self

    def predict(self, X: npt.ArrayLike) -> IntArray:
        """Type number of each row; rows with NaN features go to the nearest centroid over the rest."""
        x = np.asarray(X, dtype=np.float64)
        out = np.full(len(x), -1, dtype=np.int64)
        complete = np.all(np.isfinite(x), axis=1)
        if complete.any():
            rows = np.flatnonzero(complete)
            with threadpool_limits(limits=1):
                for start in range(0, rows.size, _PREDICT_ROWS):  # bounded copies on a big fleet's table
                    part = rows[start:start + _PREDICT_ROWS]
                    out[part] = self.order_[self.pipeline_.predict(x[part])]
        partial = ~complete & np.any(np.isfinite(x), axis=1)
        if partial.any():
            scale = self.pipeline_[0].scale_
            diff = (x[partial][:, None, :] - self.centroids_[None, :, :]) / scale
            out[partial] = np.argmin(np.nansum(diff**2, axis=2), axis=1)
        return out


def type_names(n_types: int) -> list[str]:
    """``["T1", "T2", ...]``."""
    return [f"{TYPE_PREFIX}{k + 1}" for k in range(n_types)]


def fit_types(features: pd.DataFrame, cfg: CyclesConfig) -> tuple[DutyTypeClusterer, tuple[str, ...]]:
    """Fit the duty-type model on a micro-trip feature table.

    Parameters
    ----------
    features : DataFrame
        :func:`fleetfuel.segment.microtrip_features` rows (any order; sorted by ``microtrip_id``
        here for determinism).
    cfg : CyclesConfig

    Returns
    -------
    model : DutyTypeClusterer
        Fitted on the complete rows at least ``cfg.min_fit_duration_s`` long with positive weight;
        each type holds at least ``cfg.min_type_share`` of the weight; while a type holds less
        driving time than one cycle (``cfg.target_duration_s``), fewer types are fitted (down to
        ``cfg.min_types``), so that small logs give types that can each have a cycle.
    columns : tuple of str
        The clustering features used (those known on at least one row).

    Raises
    ------
    ValueError
        Too few rows for ``cfg.min_types`` (the stage turns this into a CycleError).
    """
    table = by_microtrip(features)
    matrix = cluster_matrix(table)
    columns = tuple(c for c in matrix.columns if matrix[c].notna().any())
    x = matrix[list(columns)].to_numpy(dtype=np.float64)
    w = fit_weight(table, cfg)
    duration = table["duration_s"].to_numpy(dtype=np.float64, na_value=np.nan)
    rows = np.all(np.isfinite(x), axis=1) & (w > 0) & (duration >= cfg.min_fit_duration_s)
    sample = fit_subsample(rows, cfg.fit_sample, cfg.seed)
    model = _fit(x[sample], w[sample], cfg, cfg.max_types)
    # Every type should hold one cycle's worth of driving (small logs): fewer types until it does.
    time_s = duration[rows]
    while model.n_types_ > cfg.min_types:
        labels = model.labels_ if sample.size == time_s.size else model.predict(x[rows])
        held = np.bincount(labels, weights=time_s, minlength=model.n_types_)
        if held.min() >= cfg.target_duration_s:
            break
        model = _fit(x[sample], w[sample], cfg, model.n_types_ - 1)
    return model, columns


def fit_subsample(rows: npt.NDArray[np.bool_], limit: int, seed: int) -> IntArray:
    """Indices of the rows the types are fitted on: every row under ``rows``, or a seeded uniform
    draw of ``limit`` of them (sorted) when there are more.

    The draw depends only on the table (sorted by micro-trip id) and the seed, never on the
    engine; each drawn row keeps its weight, so the weighted fit of the draw estimates the
    weighted fit of all rows.
    """
    index = np.flatnonzero(rows)
    if index.size <= limit:
        return index
    # a stream of its own (seed, 1): not the k-means starts' or the silhouette draw's numbers
    rng = np.random.default_rng([seed, 1])
    return np.sort(rng.choice(index, size=limit, replace=False))


def _fit(x: FloatArray, w: FloatArray, cfg: CyclesConfig, max_types: int) -> DutyTypeClusterer:
    model = DutyTypeClusterer(
        min_types=cfg.min_types,
        max_types=max_types,
        silhouette_sample=cfg.silhouette_sample,
        silhouette_tolerance=cfg.silhouette_tolerance,
        pca_variance=cfg.pca_variance,
        n_init=cfg.kmeans_n_init,
        min_type_share=cfg.min_type_share,
        random_state=cfg.seed,
    )
    return model.fit(x, sample_weight=w)


def predict_types(model: DutyTypeClusterer, columns: tuple[str, ...], features: pd.DataFrame) -> pd.Series:
    """Type name (``T1``...) of every micro-trip, indexed like ``features`` (<NA>: no feature known)."""
    x = cluster_matrix(features)[list(columns)].to_numpy(dtype=np.float64)
    codes = model.predict(x)
    names = np.asarray([*type_names(model.n_types_), None], dtype=object)
    return pd.Series(pd.array(names[np.where(codes >= 0, codes, -1)], dtype="string"), index=features.index, name="type")
