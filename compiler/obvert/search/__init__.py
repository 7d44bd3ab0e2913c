"""Event times searched directly on the finite-volume model (the fast planner).

For a fixed event sequence the whole cook is fixed by the dwell before each event; the done
time is then read off one run per scenario (:mod:`obvert.search.readoff`). The search
(:mod:`obvert.search.events`) minimises that done time over the dwells with Nelder-Mead on
a coarse mesh of the same compiled model as the reference, starting from a neighbouring node's
event times; the done time of the chosen events is read off the reference itself.
"""

from obvert.search.events import Searched, SearchError, search_events, seed_from
from obvert.search.limits import limits
from obvert.search.readoff import Sequence, read_done

__all__ = [
    "SearchError",
    "Searched",
    "Sequence",
    "limits",
    "read_done",
    "search_events",
    "seed_from",
]
