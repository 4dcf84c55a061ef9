"""Charts of an assessment, a plan or a re-plan, and a site map (matplotlib, an optional extra).

`channel_map` draws one row per hop set, each channel shaded by its predicted
per-hop hit probability (optionally with the dominant source beneath),
channel numbers below and MHz above, the fixed interferers in lanes on top
(the new one marked in a re-plan); `site_map` draws systems and interferers by
position with the harmful source -> victim pairs; `traffic_chart` draws, for
the systems with traffic requirements, the deadline-miss probability and the
watchdog stop rate against their limits. All work from the request and
answer JSON, so a saved answer can be charted later.
"""

from cohop.charts._mpl import PlotUnavailable
from cohop.charts.channel_map import channel_map
from cohop.charts.site_map import site_map
from cohop.charts.traffic_panels import traffic_chart

__all__ = ["PlotUnavailable", "channel_map", "site_map", "traffic_chart"]
