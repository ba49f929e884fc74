"""SVG charts of answers (risk budgets over time, risk curves), drawn with matplotlib.

A question may declare a chart: a function from its answer document (the JSON-ready
body the API sends) to SVG bytes, so that the HTTP layer and the command line draw the
same chart from the same figures. matplotlib is imported only when a chart is drawn,
and only its SVG backend is used (a ``Figure`` saved as SVG, no pyplot, no window).

Risks are drawn on a log scale from their ``log10`` members, which never underflow:
a risk of 1e-400 is placed as surely as one of 1e-4. The ticks read as powers of ten.
Text stays text in the SVG (``svg.fonttype`` none), so labels can be read and searched,
and the file carries no date and fixed element ids, so one answer gives one chart.
"""

from __future__ import annotations

import io
import math
import threading
from collections.abc import Mapping, Sequence
from typing import Any, Final

#: The media type of a chart.
SVG_MEDIA_TYPE: Final = "image/svg+xml"
#: Size of a chart in inches: 640 x 360 CSS pixels (96 to the inch; the SVG says 480 x 270
#: pt), a dashboard panel.
CHART_PIXELS: Final = (640, 360)
CHART_SIZE: Final = (CHART_PIXELS[0] / 96, CHART_PIXELS[1] / 96)
CHART_DPI: Final = 96
#: matplotlib's settings are process-wide: one chart is drawn at a time.
_DRAWING = threading.Lock()
_STYLE: Final[dict[str, Any]] = {"svg.fonttype": "none", "svg.hashsalt": "urnbound",
                                 "font.size": 9.0, "axes.grid": True, "grid.alpha": 0.3}
#: Time units for the time axis, largest first: (name, seconds, shown from this many).
_TIME_UNITS: Final = (("years", 365 * 86_400, 2), ("days", 86_400, 2), ("hours", 3_600, 2),
                      ("minutes", 60, 2), ("seconds", 1, 0))
RISK_LABEL: Final = "collision risk, P(some two equal) (log scale)"


def _log10(magnitude: Mapping[str, Any] | None) -> float | None:
    if magnitude is None:
        return None
    value = magnitude.get("log10")
    return float(value) if value is not None and math.isfinite(value) else None


def time_unit(horizon_seconds: float) -> tuple[str, float]:
    """The unit a time axis up to ``horizon_seconds`` is labelled in, and its seconds.

    >>> time_unit(63_072_000), time_unit(90)
    (('years', 31536000), ('seconds', 1))
    """
    for name, seconds, shown_from in _TIME_UNITS:
        if horizon_seconds >= shown_from * seconds:
            return name, seconds
    return "seconds", 1


def _power_ticks(axis: Any) -> None:
    """Label a log10 axis with powers of ten at whole exponents."""
    from matplotlib.ticker import FuncFormatter, MaxNLocator

    axis.set_major_locator(MaxNLocator(nbins=7, integer=True))
    axis.set_major_formatter(FuncFormatter(lambda value, _: f"1e{int(round(value))}"))


def _svg(draw: Any) -> bytes:
    """Run ``draw(figure, axes)`` on a fresh figure and return it as SVG bytes."""
    import matplotlib
    from matplotlib.figure import Figure

    with _DRAWING, matplotlib.rc_context(_STYLE):  # type: ignore[arg-type]
        figure = Figure(figsize=CHART_SIZE, dpi=CHART_DPI)
        figure.subplots_adjust(left=0.13, right=0.97, top=0.91, bottom=0.14)
        axes = figure.add_subplot()
        draw(figure, axes)
        out = io.BytesIO()
        figure.savefig(out, format="svg", metadata={"Date": None})
    return out.getvalue()


def _risk_limits(axes: Any, values: Sequence[float]) -> None:
    """A log10 range from the whole power below the lowest value to the one above the
    highest (probabilities stop at 1e0), at least one decade wide."""
    high = min(0.0, float(math.ceil(max(values))))
    low = min(float(math.floor(min(values))), high - 1)
    axes.set_ylim(low, high)
    _power_ticks(axes.yaxis)


def budget_chart(document: Mapping[str, Any]) -> bytes:
    """The budget's risk over time: the series, the max_risk line, the moment it runs out."""
    series = document["series"]
    horizon = float(series[-1]["seconds"])
    unit, unit_seconds = time_unit(horizon)
    budget = _log10(document.get("max_risk"))
    exhausted = document.get("exhausted_after")

    def draw(figure: Any, axes: Any) -> None:
        points = [(float(p["seconds"]) / unit_seconds, _log10(p["collision"])) for p in series]
        shown = [(t, y) for t, y in points if y is not None]
        axes.plot([t for t, _ in shown], [y for _, y in shown], color="#1f5fa8",
                  linewidth=1.8, label="projected risk")
        values = [y for _, y in shown]
        if budget is not None:
            axes.axhline(budget, color="#b03030", linestyle="--", linewidth=1.2,
                         label=f"max_risk {document['max_risk']['value']:.3g}")
            values.append(budget)
        if exhausted is not None:
            moment = float(exhausted["seconds"]) / unit_seconds
            axes.axvline(moment, color="#e08a00", linestyle=":", linewidth=1.5,
                         label=f"budget runs out: {exhausted['duration']}")
        if values:
            _risk_limits(axes, values)
        axes.set_xlim(0, horizon / unit_seconds)
        axes.set_xlabel(f"time from now ({unit})")
        axes.set_ylabel(RISK_LABEL)
        axes.set_title(f"Risk budget: {document['space']['description']}", fontsize=9)
        axes.legend(loc="lower right", fontsize=8)

    return _svg(draw)


def _count_log10(text: str) -> float:
    """log10 of a whole number written in decimal, of any size.

    >>> _count_log10("1000"), round(_count_log10(str(2**8192)), 6)
    (3.0, 2466.037724)
    """
    head = text[:17]
    return math.log10(int(head)) + len(text) - len(head)


def curve_chart(document: Mapping[str, Any]) -> bytes:
    """The chance and its complement against the count, both on log scales."""
    points = [p for p in document["points"] if int(p["count"]) >= 1]
    event = str(document.get("event", "the event"))

    def draw(figure: Any, axes: Any) -> None:
        counts = [_count_log10(p["count"]) for p in points]
        risks = [y for y in (_log10(p["risk"]) for p in points) if y is not None]
        for member, label, color in (("risk", f"P({event})", "#1f5fa8"),
                                     ("complement", "its complement", "#3a8a3a")):
            shown = [(x, _log10(p[member])) for x, p in zip(counts, points, strict=True)]
            shown = [(x, y) for x, y in shown if y is not None]
            axes.plot([x for x, _ in shown], [y for _, y in shown], color=color, linewidth=1.8,
                      label=label)
        if risks:  # the scale follows the risk; a complement far below it leaves the frame
            _risk_limits(axes, risks)
        _power_ticks(axes.xaxis)
        items = "identifiers drawn" if document.get("question", "collisions") == "collisions" \
            else "items placed"
        axes.set_xlabel(f"{items} (count, log scale)")
        axes.set_ylabel("probability (log scale)")
        axes.set_title(f"{str(document.get('question', 'collisions')).capitalize()}: "
                       f"{document['space']['description']}", fontsize=9)
        axes.legend(loc="center left", fontsize=8)

    return _svg(draw)
