"""The map driven in Debian's Chromium by playwright, with every network request refused."""

import pytest
from click.testing import CliRunner

from planner.cli import main
from tests.test_map_browser import CHROMIUM, FLAGS

import playwright.sync_api as pw   # a test extra: `make test` installs it


@pytest.fixture(scope="module")
def page(demo_run):
    out, _ = demo_run("scenario_network.toml")
    blocked, errors = [], []
    with pw.sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, headless=True,
                                    args=[f for f in FLAGS if not f.startswith("--window")])
        pg = browser.new_page(viewport={"width": 1200, "height": 900})
        pg.on("pageerror", lambda e: errors.append(str(e)))

        def route(r):
            if r.request.url.startswith(("file:", "data:")):
                r.continue_()
            else:
                blocked.append(r.request.url)
                r.abort()

        pg.route("**/*", route)
        pg.goto((out / "map.html").as_uri())
        pg.wait_for_selector(".leaflet-overlay-pane path")
        yield pg, blocked, errors, out
        browser.close()


def test_loads_offline_without_errors(page):
    pg, blocked, errors, _ = page
    assert not errors and not blocked
    assert pg.evaluate("L.version") == "1.9.3"


def test_tree_markers_and_layers(page):
    pg, _, _, _ = page
    assert pg.locator("path.plan-marker").count() >= 1 + 2 + 4      # source, tanks, outlets
    assert pg.locator("path.contour").count() > 10
    assert pg.locator("path.pipe-stretch").count() == 0              # hidden until chosen
    pg.get_by_text("pipeline (size and class)").click()
    assert pg.locator("path.pipe-stretch").count() > 5


def test_popup_and_screenshot(page, tmp_path):
    import matplotlib.image as mpimg

    pg, _, _, _ = page
    pg.locator("path.plan-feature").first.dispatch_event("click")
    popup = pg.locator(".leaflet-popup-content")
    popup.wait_for()
    assert "rule:" in popup.inner_text() and "chainage" in popup.inner_text()
    shot = tmp_path / "map.png"
    pg.screenshot(path=str(shot))
    img = mpimg.imread(shot)[..., :3]
    assert img.std() > 0.05


def _planned_with_names(demo_folder, tmp_path, name: str, *, source: bool = False):
    """``gravplan plan`` of the demo's check-mode line with the project, an outlet (and
    the source) named ``name`` (a TOML literal string: no escapes); its output folder."""
    lit = f"'''{name}'''"
    text = (demo_folder / "scenario_given_pipe.toml").read_text()
    text = text.replace('name = "Varo spring - Tamsel - Orun fields gravity main (demo)"',
                        f"name = {lit}").replace('name = "Orun fields hydrant"', f"name = {lit}")
    if source:
        text = text.replace('name = "Varo spring box"', f"name = {lit}")
    text = text.replace('dem = "dem.tif"', f'dem = "{(demo_folder / "dem.tif").as_posix()}"')
    text = text.replace('file = "route.geojson"', f'file = "{(demo_folder / "route.geojson").as_posix()}"')
    (tmp_path / "s.toml").write_text(text)
    out = tmp_path / "out"
    res = CliRunner().invoke(main, ["plan", str(tmp_path / "s.toml"), "--out", str(out)])
    assert res.exit_code in (0, 2), res.output
    return out


def test_markup_in_names_is_shown_as_text(page, demo_folder, tmp_path):
    """A project and an outlet named with markup appear as text in the map and the report."""
    evil = 'Orun <img src=x onerror="window.pwned=1"> <b>fields</b>'
    out = _planned_with_names(demo_folder, tmp_path, evil)
    # one playwright per process: a new page of the module's browser
    pg = page[0].context.browser.new_page(viewport={"width": 1200, "height": 900})
    try:
        pg.route("**/*", lambda r: r.continue_() if r.request.url.startswith(("file:", "data:"))
                 else r.abort())
        pg.goto((out / "report.html").as_uri())
        assert pg.locator("h1").inner_text() == evil
        assert pg.title() == evil
        assert pg.locator("img[src=x]").count() == 0 and pg.locator("h1 b").count() == 0
        assert evil in pg.locator("body").inner_text()              # the outlet, as text
        pg.goto((out / "map.html").as_uri())
        pg.wait_for_selector(".leaflet-overlay-pane path")
        assert pg.locator("img[src=x]").count() == 0
        for k in range(pg.locator("path.plan-marker").count()):
            pg.locator("path.plan-marker").nth(k).dispatch_event("click")
            pg.locator(".leaflet-popup-content").last.wait_for()
        texts = pg.locator(".leaflet-popup-content").all_inner_texts()
        assert any(t.startswith(evil) for t in texts)          # the outlet's popup, as text
        assert pg.locator(".leaflet-popup-content img, .leaflet-popup-content b b").count() == 0
        assert pg.evaluate("window.pwned") is None
    finally:
        pg.close()


def test_names_cannot_run_script_in_the_map(page, demo_folder, tmp_path):
    """Payloads for the HTML, attribute, script and template-literal contexts in every
    name the map shows (project, source, outlet, tank): no dialog opens, no script runs,
    and the names read as typed (folium puts tooltips and popups in JS template strings)."""
    evil = ("T`${alert(3)}`${window.pwned=1}\\`</script><script>alert(4)</script>"
            "\"'><img src=x onerror=alert(5)>")
    out = _planned_with_names(demo_folder, tmp_path, evil, source=True)
    pg = page[0].context.browser.new_page(viewport={"width": 1200, "height": 900})
    dialogs = []
    pg.on("dialog", lambda d: (dialogs.append(d.message), d.dismiss()))
    try:
        pg.route("**/*", lambda r: r.continue_() if r.request.url.startswith(("file:", "data:"))
                 else r.abort())
        pg.goto((out / "map.html").as_uri())
        pg.wait_for_selector(".leaflet-overlay-pane path")
        for k in range(pg.locator("path.plan-marker").count()):
            pg.locator("path.plan-marker").nth(k).dispatch_event("click")
            pg.locator(".leaflet-popup-content").last.wait_for()
            pg.locator("path.plan-marker").nth(k).dispatch_event("mouseover")
        texts = pg.locator(".leaflet-popup-content").all_inner_texts()
        assert any(t.startswith(evil) for t in texts), texts        # shown as typed
        assert evil in pg.locator("body").inner_text()               # the heading too
        assert pg.evaluate("window.pwned") is None and not dialogs, dialogs
        assert pg.locator("img[src=x]").count() == 0
    finally:
        pg.close()
