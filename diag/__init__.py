"""diag: why a microwave hop faded, and how much outage each cause cost.

Pipeline (one module per stage, see DEVELOPERS.md): ingest -> normalise -> links -> models -> baseline -> events
-> classify -> stats -> outage -> report; simulate feeds tests and the demo; batch runs many hops on Dask.
"""
from diag.errors import InputError
from diag.links import Link, read_links_table

__all__ = ["InputError", "Link", "read_links_table"]
__version__ = "0.1.0"
