"""Warnings that never contradict each other, settled after the regimen is designed.

``levels-unused`` says the estimate used ignores the usable levels; a nomogram
reading (``nomogram-read``, ``nomogram-borderline``, ``nomogram-above-q48``)
says a level was read on the chart. Both can stand at once (a level the chart
reads while no estimation method could use it, e.g. one below the assay
limit with no population model to take it as a bound): the levels-unused text
then says the chart used that level and only the figures beside it ignore it,
instead of "no method could use them".
"""

from __future__ import annotations

import dataclasses
import re

from tdmtui.core.alerts import Alert

_CHART = ("nomogram-read", "nomogram-borderline", "nomogram-above-q48")
_LEVEL = re.compile(r"levels\[(\d+)\]")


def settle(alerts: list[Alert]) -> list[Alert]:
    """``alerts`` with ``levels-unused`` reworded where a nomogram reading used a level."""
    read = sorted({a.field for a in alerts if a.code in _CHART and _LEVEL.fullmatch(a.field)})
    if not read:
        return alerts
    where = ", ".join(read)
    out = []
    for a in alerts:
        if a.code == "levels-unused":
            n = a.message.split(" ", 1)[0]
            a = dataclasses.replace(a, message=(
                f"{n} usable level(s) on record: the interval is read on the nomogram from {where}; the predicted "
                "figures beside it come from the population estimate, which does not use the level(s): judge the "
                "regimen by the chart and confirm with the next level"))
        out.append(a)
    return out
