"""gravplan: plan gravity-fed water pipelines from a route and a DEM.

The public API lives in :mod:`planner.api`; its main entry points are importable
from the package itself, e.g. ``planner.sample_profile(route, dem)``.
"""

from .version import VERSION as __version__  # noqa: F401 (the package's version)

_API = ("load_scenario", "read_route", "sample_profile", "profile_from_survey",
        "build_profile", "plan", "write_outputs")


def __getattr__(name):
    # imported lazily so that `gravplan --help` stays fast
    if name in _API:
        from . import api
        return getattr(api, name)
    raise AttributeError(f"module 'planner' has no attribute {name!r}")


def __dir__():
    return sorted(list(globals()) + list(_API))
