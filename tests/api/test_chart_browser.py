"""Charts render in a real headless browser: Chromium (Debian's chromium-headless-shell).

The SVG the API sends is written to a temporary folder and Chromium takes a screenshot of
it at the chart's size; the PNG must have that size and carry the drawing (dark pixels in
the plot and at its right edge, not a blank page). Chromium is one subprocess, bounded by
a timeout. ``.ci/run`` installs the package; elsewhere the test is skipped when it is
missing, and fails under CI=true.
"""

from __future__ import annotations

import os
import shutil
import subprocess
from pathlib import Path

import pytest
from flask.testing import FlaskClient
from PIL import Image

from urnbound.domain.charts import CHART_PIXELS

BROWSER = shutil.which("chromium-headless-shell") or shutil.which("chromium")
BUDGET = ("/v1/budgets?alphabet=lowercase-alphanumeric&length=14&issued=4e7&rate=2e5&per=P1D"
          "&growth=1.5&horizon=P1095D&max_risk=1e-6&points=100")
CURVE = "/v1/curves?size=1e4&from=1e3&to=1e5&points=20&question=loads&load=30"


def screenshot(svg: Path, png: Path) -> Image.Image:
    """Chromium's screenshot of ``svg`` at the chart's size."""
    assert BROWSER is not None
    width, height = CHART_PIXELS
    subprocess.run(
        [BROWSER, "--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars",
         f"--window-size={width},{height}", f"--screenshot={png}", svg.as_uri()],
        check=True, capture_output=True, timeout=120, cwd=svg.parent,
    )
    return Image.open(png).convert("L")


@pytest.mark.skipif(BROWSER is None and os.environ.get("CI") != "true",
                    reason="Chromium is not installed (.ci/run installs it)")
@pytest.mark.parametrize("path", [BUDGET, CURVE])
def test_chart_renders_in_chromium_at_panel_size(client: FlaskClient, tmp_path: Path,
                                                 path: str) -> None:
    assert BROWSER is not None, "CI must have Chromium: .ci/run installs it"
    response = client.get(path, headers={"Accept": "image/svg+xml"})
    svg = tmp_path / "chart.svg"
    svg.write_bytes(response.data)
    image = screenshot(svg, tmp_path / "chart.png")
    assert image.size == CHART_PIXELS
    histogram = image.histogram()
    dark = sum(histogram[:128])  # axes, lines, text
    assert dark > 2_000
    assert sum(histogram[250:]) > image.size[0] * image.size[1] // 2  # mostly background
    right = image.crop((int(0.9 * CHART_PIXELS[0]), 0, CHART_PIXELS[0], CHART_PIXELS[1]))
    assert sum(right.histogram()[:128]) > 50  # the plot reaches the right of the panel
