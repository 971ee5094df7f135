"""The ``gravplan`` command line: parse, call the API, print.  No computation here."""

from __future__ import annotations

import logging
import sys
import warnings
from pathlib import Path

import click

from .cautions import SHORT_CAUTION
from .errors import PlannerError
from .scenario.keys import default

DEMO_SCENARIO = Path(__file__).resolve().parent.parent / "demo_terrain" / "scenario.toml"


class _KeyValue(click.ParamType):
    """A number held to the range of the scenario key it stands for (one rule for both).

    A bad value is a usage error (exit 2) naming the option and the range.
    """

    name = "number"

    def __init__(self, table: str, key: str):
        from .scenario.keys import keys_of

        self.key = keys_of(table)[key]

    def convert(self, value, param, ctx):
        try:
            number = float(value)
        except (TypeError, ValueError):
            self.fail(f"{value!r} is not a number", param, ctx)
        problem = self.key.check(number)
        if problem:
            self.fail(problem, param, ctx)
        return number


class _Reported(click.ClickException):
    def show(self, file=None):
        click.echo(f"error: {self.message}", err=True)


def _run(fn):
    """Call ``fn``, turning PlannerErrors and OS errors into a message and exit 1.

    Warnings become ``warning:`` lines, each once.
    """
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            result = fn()
        except PlannerError as exc:
            _print_warnings(caught)
            raise _Reported(str(exc)) from None
        except OSError as exc:      # the system refused a file: its name and reason suffice
            _print_warnings(caught)
            where = f"{exc.filename}: " if exc.filename else ""
            raise _Reported(f"{where}{exc.strerror or exc}") from None
    _print_warnings(caught)
    return result


def _print_warnings(caught):
    seen = set()
    for w in caught:
        if issubclass(w.category, (DeprecationWarning, PendingDeprecationWarning)):
            continue            # a library's note to developers, not to the user
        text = str(w.message)
        if text not in seen:
            seen.add(text)
            click.echo(f"warning: {text}", err=True)


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.option("-v", "--verbose", count=True, help="More log output on stderr.")
@click.version_option(package_name="gravplan")
def main(verbose):
    """Plan gravity-fed water pipelines from a route and a DEM.

    \b
    Examples:
      gravplan demo
      gravplan profile route.geojson --dem dem.tif --out profile.csv
      gravplan plan scenario.toml --out results/
    """
    logging.basicConfig(level=logging.WARNING - 10 * verbose, stream=sys.stderr,
                        format="%(levelname)s %(name)s: %(message)s")


@main.command()
@click.argument("route", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--dem", "dems", multiple=True, required=True, type=click.Path(path_type=Path),
              help="DEM file (GeoTIFF, VRT, ...); repeat for several tiles.")
@click.option("--spacing", type=_KeyValue("route", "spacing_m"), default=None,
              help="Largest point spacing [m]; default the DEM cell size.")
@click.option("--cover", type=_KeyValue("criteria", "cover_m"), default=default("criteria", "cover_m"),
              show_default=True,
              help="Cover over the pipe [m].")
@click.option("--max-void", type=_KeyValue("terrain", "max_void_m"),
              default=default("terrain", "max_void_m"), show_default=True,
              help="Longest DEM void bridged along the line [m].")
@click.option("--out", type=click.Path(dir_okay=False, path_type=Path), default=None,
              help="Write the profile as CSV here (default: standard output).")
def profile(route, dems, spacing, cover, max_void, out):
    """Sample the elevation profile of ROUTE over a DEM.

    \b
    Example:
      gravplan profile demo_terrain/route.geojson --dem demo_terrain/dem.tif --out profile.csv
    """
    from . import api
    from .report.profile_csv import profile_csv_text, write_profile_csv

    prof = _run(lambda: api.sample_profile(route, list(dems), spacing_m=spacing, cover_m=cover,
                                           max_void_m=max_void))
    if out is None:
        click.echo(profile_csv_text(prof), nl=False)
    else:
        _run(lambda: write_profile_csv(prof, out))
        click.echo(f"wrote {out}")
    click.echo(f"{prof.n} points over {prof.length_m:,.1f} m (pipe length "
               f"{prof.slope_length_m[-1]:,.1f} m); ground {prof.ground_m.min():.1f} to "
               f"{prof.ground_m.max():.1f} m", err=True)


def _findings_and_files(findings, written):
    if findings:
        click.echo("  findings:")
        for f in findings:
            click.echo(f"    {f.severity:<7} {f.message}")
            if f.remedy:
                click.echo(f"            -> {f.remedy}")
    for path in written.values():
        click.echo(f"  wrote {path}")
    click.echo(f"  {SHORT_CAUTION}")


def _report(plan, written):
    from .units import LPS

    sc, e = plan.scenario, plan.energy
    click.echo(f"{sc.project.name}")
    pipe = (sc.pipe.label or sc.pipe.material) if sc.pipe is not None else "designed"
    click.echo(f"  line {plan.profile.length_m:,.0f} m, design flow "
               f"{plan.total_flow_m3s / LPS:.2f} L/s, pipe {pipe}")
    click.echo("  energy balance per reach (m of water head):")
    ch = plan.profile.chainage_m
    for r in e.reaches:
        click.echo(f"    {ch[r.start_index]:>8,.0f} to {ch[r.end_index]:>8,.0f} m: available "
                   f"{r.available:7.2f} = friction {r.friction:6.2f} + minor {r.minor:5.2f} + "
                   f"velocity head {r.velocity_head:4.2f} + residual pressure "
                   f"{r.residual_pressure:6.2f}")
    click.echo("  outlets:")
    for o in plan.outlets:
        mark = "ok " if o.ok else "LOW"
        click.echo(f"    [{mark}] {o.name}: chainage {o.chainage_m:,.0f} m, "
                   f"{o.flow_m3s / LPS:.2f} L/s, residual {o.pressure_head_m:.1f} m "
                   f"(min {o.min_pressure_m:g} m)")
        if o.basis != "flow given":
            click.echo(f"          design flow: {o.basis}")
    if plan.stretches and plan.mode == "design":
        click.echo(f"  pipe ({plan.sizing.summary}):")
        for st in plan.stretches:
            click.echo(f"    {st.chainage_m:>8,.0f} to {st.chainage_end_m:>8,.0f} m  "
                       f"{st.option.label:<26} {st.length_m:>8,.1f} m  static max "
                       f"{st.max_static_head_m:5.1f} m of {st.rating_head_m:5.1f} m")
        if plan.binding_chainages_m:
            points = ", ".join(f"{c:,.0f}" for c in plan.binding_chainages_m)
            click.echo(f"  critical points (the pressure limit binds there): chainage {points} m")
    if plan.tanks:
        click.echo("  break-pressure tanks:")
        for t in plan.tanks:
            click.echo(f"    {t.name}: chainage {t.chainage_m:,.0f} m, water level "
                       f"{t.water_level_m:.1f} m ({t.rule})")
    if plan.features:
        click.echo("  air valves and washouts:")
        for f in plan.features:
            click.echo(f"    {f.kind.replace('_', ' '):<9} {f.chainage_m:>8,.0f} m  "
                       f"DN{f.size_mm:<4.0f} {f.rule}")
    _uncertainty_lines([("", plan.uncertainty)] if plan.uncertainty else [], plan.confidence_prices)
    _findings_and_files(plan.findings, written)


def _uncertainty_lines(runs, prices=()):
    if not runs:
        return
    if prices:
        words = ", ".join(f"{c:.0%} {cost:,.0f}" if cost is not None else f"{c:.0%} no design"
                          for c, cost in prices)
        click.echo(f"  price of confidence (pipe cost at each design.confidence): {words}")
    m = runs[0][1].model
    click.echo(f"  DEM uncertainty (sigma {m.sigma_m:.2f} m over {m.correlation_m:,.0f} m, "
               f"{runs[0][1].realisations:,} realisations; {m.source}):")
    from .design.results import margin_sentence

    sentences = [margin_sentence(u.margin_m, u.static_margin_m, u.design_confidence)
                 for _, u in runs]
    same = len(set(sentences)) == 1            # said once when every path says the same
    for (name, u), sentence in zip(runs, sentences):
        if name:
            click.echo(f"    path {name}:")
        for o, p, fall in u.outlets:
            click.echo(f"    {o}: {p:.0%} chance below its minimum; 95 % fall {fall:.1f} m")
        if not same:
            click.echo(f"    {sentence}")
    if same:
        click.echo(f"    {'every path: ' if len(runs) > 1 else ''}{sentences[0]}")


def _report_network(plan, written):
    from .units import LPS

    click.echo(f"{plan.scenario.project.name}")
    how = f" ({plan.sizing.summary})" if plan.sizing is not None else " (pipes given)"
    click.echo(f"  {len(plan.links)} links, design flow {plan.total_flow_m3s / LPS:.2f} L/s, pipe "
               f"cost {plan.pipe_cost:,.0f}{how}")
    for lk, flow in zip(plan.links, plan.link_flow_m3s):
        parent = plan.links[lk.parent].name if lk.parent >= 0 else "the source"
        sizes = ", ".join(dict.fromkeys(st.option.label for st in lk.stretches))
        click.echo(f"  {lk.name} (from {parent}): {lk.profile.length_m:,.0f} m, "
                   f"{flow / LPS:.2f} L/s; {sizes}")
        for t in lk.tanks:
            click.echo(f"    tank {t.name}: chainage {t.chainage_m:,.0f} m, water level "
                       f"{t.water_level_m:.1f} m ({t.rule})")
        for o in lk.outlets:
            mark = "ok " if o.ok else "LOW"
            click.echo(f"    [{mark}] {o.name}: chainage {o.chainage_m:,.0f} m, "
                       f"{o.flow_m3s / LPS:.2f} L/s, residual {o.pressure_head_m:.1f} m "
                       f"(min {o.min_pressure_m:g} m)")
        n_air = sum(f.kind == "air_valve" for f in lk.features)
        n_wash = sum(f.kind == "washout" for f in lk.features)
        click.echo(f"    {n_air} air valve(s), {n_wash} washout(s)")
    _uncertainty_lines(list(plan.uncertainty), plan.confidence_prices)
    _findings_and_files(plan.findings, written)


def _plan_and_write(scenario_path: Path, out: Path, beside: dict[str, Path] | None = None):
    """Plan a scenario and write its results as one set; print the summary.

    Each scenario in ``beside`` is planned too and written into that subfolder of the
    same set.  Returns the plans.
    """
    from . import api


    beside = beside or {}

    def work():
        main_plan = api.plan_any(api.load_scenario(scenario_path))
        others = {name: api.plan_any(api.load_scenario(p)) for name, p in beside.items()}
        return main_plan, others, api.write_outputs(main_plan, out, beside=others)

    from .design.results import NetworkPlan

    pl, others, written = _run(work)
    for k, (name, p) in enumerate([("", pl), *others.items()]):
        if k:
            click.echo("")
        files = {key.removeprefix(f"{name}/"): v for key, v in written.items()
                 if (key.startswith(f"{name}/") if name else "/" not in key)}
        (_report_network if isinstance(p, NetworkPlan) else _report)(p, files)
    return [pl, *others.values()]


@main.command()
@click.argument("scenario", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--out", type=click.Path(file_okay=False, path_type=Path), default=Path("outputs/plan"),
              show_default=True, help="Folder for plan.json, profile.csv, profile.png, map.html.")
@click.option("--overwrite", is_flag=True, help="Replace results already in --out.")
def plan(scenario, out, overwrite):
    """Compute heads and pressures for SCENARIO and write the results.

    Exits with status 2 when the plan has errors (for example sub-atmospheric
    pressure or an outlet short of pressure); the files are still written so that
    they can be inspected.

    \b
    Example:
      gravplan plan demo_terrain/scenario.toml --out outputs/demo --overwrite
    """
    if (out / "plan.json").exists() and not overwrite:
        raise _Reported(f"{out} already holds a plan; pass --overwrite to replace it")
    pl, = _plan_and_write(scenario, out)
    if pl.errors:
        sys.exit(2)


@main.command()
@click.argument("catalogues", nargs=-1)
@click.option("--material", "materials", multiple=True, help="Keep this material (repeatable).")
@click.option("--min-size", type=_KeyValue("design", "min_size_mm"), default=None,
              help="Smallest outside diameter [mm].")
@click.option("--max-size", type=_KeyValue("design", "max_size_mm"), default=None,
              help="Largest outside diameter [mm].")
@click.option("--min-pn", type=_KeyValue("pipe", "pressure_rating_bar"), default=None,
              help="Lowest pressure rating [bar].")
def catalogue(catalogues, materials, min_size, max_size, min_pn):
    """List pipe options from CATALOGUES (built-in names or CSV paths; default all built-in).

    \b
    Example:
      gravplan catalogue pe100 --min-size 50 --max-size 110 --min-pn 10
    """
    from .catalogue.pipes import BUILTIN, load_options

    names = list(catalogues) or list(BUILTIN)
    options = _run(lambda: load_options(names, materials=materials or None, min_od_mm=min_size,
                                        max_od_mm=max_size, min_rating_bar=min_pn))
    click.echo(f"{'label':<28}{'OD mm':>8}{'ID mm':>9}{'wall mm':>9}{'PN bar':>8}"
               f"{'rough mm':>10}{'C':>6}{'cost/m':>9}  catalogue")
    for o in options:
        click.echo(f"{o.label:<28}{o.outside_diameter * 1e3:>8.1f}{o.inside_diameter * 1e3:>9.2f}"
                   f"{o.wall * 1e3:>9.1f}{o.rating / 1e5:>8.1f}{o.roughness * 1e3:>10.4f}"
                   f"{o.c_factor:>6.0f}{o.cost_per_m:>9.2f}  {o.catalogue}")
    click.echo(f"{len(options)} options; built-in prices are invented demo values", err=True)


@main.command()
@click.argument("dem", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--scenario", type=click.Path(dir_okay=False, path_type=Path), default=None,
              help="Start from this scenario's route, source and outlets.")
@click.option("--out", type=click.Path(dir_okay=False, path_type=Path), default=Path("draw.html"),
              show_default=True, help="Where to write the page.")
@click.option("--open", "open_", is_flag=True, help="Open the page in the web browser.")
def draw(dem, scenario, out, open_):
    """Write an offline page to draw a route over DEM's hillshade and contours.

    Draw the main line from the source and the branches, place the source and the
    outlets, then download the GeoJSON (and a starting scenario) that `gravplan plan`
    reads.  The page needs no internet and no server.

    \b
    Example:
      gravplan draw demo_terrain/dem.tif --out draw.html --open
    """
    from .app.draw import write_draw_page

    path = _run(lambda: write_draw_page(dem, out, scenario=scenario))
    click.echo(f"wrote {path}: open it in a web browser, draw, then download route.geojson")
    if open_:
        import webbrowser
        webbrowser.open(path.resolve().as_uri())


@main.command()
@click.argument("scenario", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--port", type=click.IntRange(0, 65535), default=8765, show_default=True,
              help="Port on 127.0.0.1 (0: any free port).")
@click.option("--open", "open_", is_flag=True, help="Open the editor in the web browser.")
def serve(scenario, port, open_):
    """Edit SCENARIO's route in the browser and watch the plan follow each edit.

    Serves on 127.0.0.1 only.  Save writes the scenario's route file (GeoJSON) and
    keeps the previous version beside it as .bak.  Stop with Ctrl-C.

    \b
    Example:
      gravplan serve my_line/scenario.toml --open
    """
    from . import api
    from .app.server import App

    def start():
        sc = api.load_scenario(scenario)
        try:
            return App(sc, port=port)
        except PlannerError:
            raise
        except OSError as exc:
            raise PlannerError(f"cannot listen on 127.0.0.1:{port} ({exc.strerror or exc}); "
                               "choose another --port") from None

    app = _run(start)
    click.echo(f"gravplan serve: editing {app.session.scenario.project.name}")
    click.echo(f"  open {app.url} (Ctrl-C stops); Save writes {app.target}")
    click.echo(f"  {SHORT_CAUTION}")
    if open_:
        import webbrowser
        webbrowser.open(app.url)
    try:
        app.serve_forever()
    except KeyboardInterrupt:
        click.echo("stopped")


@main.command()
@click.option("--out", type=click.Path(file_okay=False, path_type=Path), default=Path("outputs/demo"),
              show_default=True, help="Folder for the demo's results (replaced).")
def demo(out):
    """Plan the bundled invented demo line and its branched system; write their results.

    The line goes to OUT, the branched system (village school and irrigation branches
    added) to OUT/branched.  Generates the demo terrain first if it is not there yet.

    \b
    Example:
      gravplan demo --out outputs/demo
    """
    if not DEMO_SCENARIO.is_file():
        raise _Reported(f"the demo scenario is not installed ({DEMO_SCENARIO}); run gravplan "
                        "from a clone of the repository")
    dem = DEMO_SCENARIO.parent / "dem.tif"
    if not dem.is_file() or not (DEMO_SCENARIO.parent / "network.geojson").is_file():
        import runpy

        click.echo(f"generating the demo terrain in {dem.parent}")
        generator = runpy.run_path(str(DEMO_SCENARIO.parent / "generate.py"))
        generator["write_demo"](DEMO_SCENARIO.parent)
    _plan_and_write(DEMO_SCENARIO, out,
                    beside={"branched": DEMO_SCENARIO.parent / "scenario_network.toml"})


if __name__ == "__main__":
    main()
