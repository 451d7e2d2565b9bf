"""diag: why a microwave hop faded, and how much outage each cause cost.

Pipeline (packages in stage order, see DEVELOPERS.md): read -> analysis (reference, steps, events, classify,
fading statistics, cross-polar, outage, findings) -> report; models holds the published equations; sim feeds tests
and the demo; pipeline runs one hop's stages; batch runs many hops on Dask.
"""
from diag.errors import InputError
from diag.links import Link, read_links_table

__all__ = ["InputError", "Link", "read_links_table"]
__version__ = "0.1.0"
