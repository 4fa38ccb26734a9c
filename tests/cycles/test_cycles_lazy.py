"""The cycles package loads its modules on first use (fleetfuel/cycles/__init__.py)."""

from __future__ import annotations

import subprocess
import sys

from fleetfuel import cycles


def test_every_exported_name_resolves() -> None:
    for name in cycles.__all__:
        assert getattr(cycles, name) is not None, name
    assert set(cycles.__all__) <= set(dir(cycles))


def test_a_worker_segments_without_loading_scikit_learn() -> None:
    # The engine's task module is what each worker imports first; scikit-learn (about a second
    # to load, measured) is only needed where the clustering runs.
    code = "import sys, fleetfuel.engine.tasks; print('sklearn' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"
