"""The map page in headless Chromium (Debian's package, installed by .ci/run).

All network access is blocked (every host name resolves to nothing), so the page must
bring everything it needs.  Chromium is driven from its command line here; the page's
console errors are read from Chromium's log.
"""

import re
import shutil
import subprocess
import tempfile

import numpy as np
import pytest
from click.testing import CliRunner

from planner.cli import main

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
         "--disable-component-update", "--disable-sync", "--no-first-run", "--disable-quic",
         "--host-resolver-rules=MAP * ~NOTFOUND", "--enable-logging=stderr", "--v=0",
         "--window-size=1200,900", "--virtual-time-budget=4000"]


@pytest.fixture(scope="module")
def map_page(demo_run):
    if CHROMIUM is None:
        pytest.fail("Chromium is needed for the browser tests: apt-get install chromium "
                    "(.ci/run does this)")
    return demo_run("scenario.toml")[0] / "map.html"


def chromium(*args):
    with tempfile.TemporaryDirectory() as profile:
        return subprocess.run([CHROMIUM, *FLAGS, f"--user-data-dir={profile}", *args],
                              capture_output=True, text=True, timeout=120)


def test_page_has_no_external_resources(map_page):
    html = map_page.read_text()
    assert not re.search(r'<(script|link)[^>]+(src|href)="https?://', html)


def test_page_renders_offline_without_errors(map_page):
    res = chromium("--dump-dom", map_page.as_uri())
    console = [line for line in res.stderr.splitlines() if "CONSOLE" in line]
    assert not console, console
    dom = res.stdout
    assert dom.count("leaflet-interactive") >= 5                  # route pieces and markers
    assert dom.count('class="plan-marker') + dom.count("plan-marker leaflet-interactive") >= 5
    assert "leaflet-image-layer" in dom                            # the hillshade
    assert "Planning aid only" in dom


def test_screenshot_is_not_blank(map_page, tmp_path):
    import matplotlib.image as mpimg

    png = tmp_path / "map.png"
    chromium(f"--screenshot={png}", map_page.as_uri())
    img = mpimg.imread(png)[..., :3]
    assert img.shape[:2] == (900, 1200)
    assert img.std() > 0.05                                         # not a single colour
    # the route is drawn in the pressure colours (reds and blues), not only greys
    colourful = np.abs(img[..., 0] - img[..., 2]) > 0.25
    assert colourful.sum() > 500
