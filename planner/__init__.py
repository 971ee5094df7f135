"""gravplan: plan gravity-fed water pipelines from a route and a DEM."""

__version__ = "0.1.0"
