"""Builders for the cycles tests: noisy replicas of standard cycles, and the sample fleet run.

The standard cycles come from ``../shared/reference_cycles`` (loaded with the segment tests'
``segment_frames.cycle``, skipped when absent). Noise comes from the shared generator's
first-order autoregressive noise, :func:`fleetfuel.synth.truth.ar1_noise`.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "segment"))

from segment_frames import KMH, cycle, frame, join  # noqa: E402

from fleetfuel.synth.truth import ar1_noise  # noqa: E402

__all__ = ["KMH", "cycle", "frame", "join", "noisy_replicas", "reference_classes"]

# Noise of the replicas (our choice for the test, no source): speed times (1 + 3 % AR(1) noise
# with a 10 s correlation time), and 5-30 s of extra idle before each replica.
SPEED_NOISE_SHARE = 0.03
NOISE_CORRELATION_S = 10.0
IDLE_BEFORE_S = (5, 30)


def reference_classes() -> dict[str, np.ndarray]:
    """Labelled classes of 1 Hz speed traces [m/s], each a standard cycle or a part of one.

    - ``urban``: EPA UDDS from t = 505 s, its stabilised phase (the FTP's second bag; 40 CFR 86,
      from memory), stop-and-go;
    - ``highway``: EPA HWFET;
    - ``aggressive``: EPA US06 without its highway part (t = 130-495 s, the city/highway split of
      EPA's five-cycle method, from memory): hard accelerations in town;
    - ``wltc_medium``, ``wltc_high``, ``wltc_extra_high``: the WLTC class 3b phases (GTR 15, Annex 1:
      590-1022 s, 1023-1477 s, 1478-1800 s).

    The WLTC Low phase and the US06 highway part are left out: they are, by design of those
    cycles, the same kind of driving as the UDDS and the WLTC Extra-high phase.
    """
    _, udds = cycle("udds")
    _, hwfet = cycle("hwfet")
    _, us06 = cycle("us06")
    _, wltc = cycle("wltc")
    rest = np.zeros(3)
    return {
        "urban": udds[505:],
        "highway": hwfet,
        "aggressive": np.r_[us06[:131], rest, us06[495:]],
        "wltc_medium": np.r_[rest, wltc[590:1023], rest],
        "wltc_high": np.r_[rest, wltc[1023:1478], rest],
        "wltc_extra_high": np.r_[rest, wltc[1478:1801], rest],
    }


def noisy_replicas(classes: dict[str, np.ndarray], replicas: int, seed: int = 0) -> pd.DataFrame:
    """A clean-like frame with ``replicas`` noisy copies of each class, one vehicle per copy.

    Vehicle ids are ``<class>-<k>``, so each micro-trip's class is the vehicle id's prefix.
    """
    rng = np.random.default_rng(seed)
    frames = []
    for name, speed in classes.items():
        for k in range(replicas):
            noise = ar1_noise(speed.size, 1.0, NOISE_CORRELATION_S, rng)
            noisy = np.where(speed > 0, np.maximum(speed * (1 + SPEED_NOISE_SHARE * noise), 0.0), 0.0)
            idle = np.zeros(int(rng.integers(*IDLE_BEFORE_S)))
            frames.append(frame(np.r_[idle, noisy, np.zeros(5)], vehicle=f"{name}-{k:02d}"))
    return join(*frames)
