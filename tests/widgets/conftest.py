"""Widget tests run headless: matplotlib's Agg backend, ipywidgets without a front end."""

from __future__ import annotations

import hashlib

import pytest

pytest.importorskip("ipywidgets", reason="widget tests need ipywidgets: pip install 'convdiag[notebook]'")
pytest.importorskip("matplotlib", reason="widget tests need matplotlib")

import matplotlib

matplotlib.use("Agg")


def png_hash(host) -> str:  # type: ignore[no-untyped-def]
    """Hash of the figure as the browser would receive it (a full redraw to PNG)."""
    return hashlib.sha256(host.render_png()).hexdigest()


@pytest.fixture
def image_hash():  # type: ignore[no-untyped-def]
    return png_hash
