"""Sources and wording the built-in mesh-quality rules share, written once.

The rationale of a rule names its source; these are the ones several rules cite, and the
sentence that says how a metric is graded by place (:func:`caselint.rulekit.measures.
graded_by_place`).
"""

from __future__ import annotations

#: The library whose cell-quality definitions caselint follows (scaled Jacobian, edge ratio).
VERDICT = "Verdict geometric quality library (Stimpson et al., SAND2007-1751, 2007)"
#: The finite-volume books behind the face metrics.
FV_BOOKS = (
    "Jasak 1996 (PhD thesis, Imperial College); Ferziger & Peric 2002; Moukalled et al. 2016"
)


def places_words(entities: str = "faces or cells") -> str:
    """How a metric graded by place is judged, for its rationale (``entities``: what it
    measures, e.g. ``faces``)."""
    return (
        " Graded by place: in regions of interest and the near_wall_layers cell layers next "
        "to no-slip walls the worst value is held to these limits (grade strict); elsewhere "
        "the worst value is held to the elsewhere grade and the share of " + entities +
        " beyond the warning limit to elsewhere-share (a warning above 1 %, an error above "
        "10 %, caselint default), since a compromise far from the resolved flow is common "
        "practice. The report gives the distribution (percentiles, share beyond each limit, "
        "where the worst sits)."
    )
