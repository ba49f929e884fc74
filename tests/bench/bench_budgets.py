"""Benchmark of risk budgets, curves and charts: 500-point answers and their SVG charts.

Run: ``python tests/bench/bench_budgets.py`` (not collected by pytest). Prints two
markdown tables for the README. Targets (issue 9): a budget answer with 500 points in at
most 20 ms in-process, a chart in at most 100 ms (budgets and curves). Times are CPU time
of this process (time.process_time), medians over repeats after one warm-up (the warm-up
also pays for matplotlib's first import). "answer" is the whole JSON body as the API
sends it (load, compute, dump); "chart" is the SVG of the same answer; "projection" and
"curve" are the core alone.
"""

from __future__ import annotations

import sys
from fractions import Fraction

from timing import median_seconds

from urnbound.api.rendering import Renderer, renderer_for
from urnbound.core.curves import risk_curve
from urnbound.core.projection import IssueSchedule, project_budget
from urnbound.core.tick_budgets import project_tick_budget
from urnbound.domain.formats import TimeOrderedSpace
from urnbound.domain.inputs import Inputs
from urnbound.domain.question import Context, Question
from urnbound.domain.registry import Registry, default_registry

ANSWER_TARGET_MS = 20.0
CHART_TARGET_MS = 100.0
REPEATS = 15

#: (label, query): invented dashboards of a ledger service.
CASES = (
    ("64 bits, steady, 500 points",
     {"bits": "64", "issued": "4e7", "rate": "2e6", "per": "P1D", "horizon": "P730D",
      "max_risk": "1e-3", "points": "500"}),
    ("64 bits, growth 1.5, 500 points",
     {"bits": "64", "issued": "4e7", "rate": "2e6", "per": "P1D", "horizon": "P730D",
      "max_risk": "1e-3", "points": "500", "growth": "1.5"}),
    ("uuid-v4, steady, 500 points",
     {"format": "uuid-v4", "issued": "1e12", "rate": "1e5", "horizon": "P3650D",
      "max_risk": "1e-9", "points": "500"}),
    ("alphanumeric x 8, growth 2, 500 points",
     {"alphabet": "alphanumeric", "length": "8", "rate": "30", "horizon": "P1000D",
      "max_risk": "1e-6", "points": "500", "growth": "2"}),
    ("uuid-v7, steady, 500 points",
     {"format": "uuid-v7", "issued": "1e12", "rate": "1e6", "horizon": "P3650D",
      "max_risk": "1e-9", "points": "500"}),
    ("uuid-v7, growth 1.5, 500 points",
     {"format": "uuid-v7", "issued": "1e12", "rate": "1e6", "horizon": "P3650D",
      "max_risk": "1e-9", "points": "500", "growth": "1.5"}),
    ("64 bits, steady, 50 points",
     {"bits": "64", "issued": "4e7", "rate": "2e6", "per": "P1D", "horizon": "P730D",
      "max_risk": "1e-3"}),
)


#: (label, query): 500-point pairwise curves, the costliest past N/129 (written out).
CURVES = (
    ("2^8192, 2^8100 to N, log", {"bits": "8192", "from": str(2**8100), "to": str(2**8192),
                                  "points": "500"}),
    ("2^8192, 1 to N, linear", {"bits": "8192", "from": "1", "to": str(2**8192),
                                "points": "500", "spacing": "linear"}),
    ("2^8192, 1 to 1e2466, log", {"bits": "8192", "from": "1", "to": "1e2466",
                                  "points": "500"}),
    ("64 bits, 1 to 1e10, log", {"bits": "64", "from": "1", "to": "1e10", "points": "500"}),
    ("base64 x 22, 1 to 1e30, log", {"alphabet": "base64", "length": "22", "from": "1",
                                     "to": "1e30", "points": "500"}),
)
#: Repeats of a curve (the costliest take some 0.1 s each).
CURVE_REPEATS = 7


def timings(question: Question, inputs: Inputs, renderer: Renderer,
            context: Context) -> tuple[float, float, float]:
    """Median milliseconds of the projection alone, the JSON answer and the chart."""
    per = inputs["per"] or Fraction(1)
    schedule = IssueSchedule(inputs["issued"] or 0, inputs["rate"] / per,
                             inputs["growth"] or Fraction(1))
    space = inputs["space"]

    def core() -> object:
        if isinstance(space, TimeOrderedSpace):
            return project_tick_budget(space.random_bits, space.tick_seconds, schedule,
                                       inputs["horizon"], inputs["max_risk"],
                                       inputs["points"] or 50)
        return project_budget(space.size, schedule, inputs["horizon"], inputs["max_risk"],
                              inputs["points"] or 50)

    projection = median_seconds(core, REPEATS) * 1e3
    answer = median_seconds(lambda: renderer.render(question, inputs, context), REPEATS) * 1e3
    chart = median_seconds(lambda: renderer.render_chart(question, inputs, context),
                           REPEATS) * 1e3
    return projection, answer, chart


def curve_timings(question: Question, inputs: Inputs, renderer: Renderer,
                  context: Context) -> tuple[float, float, float]:
    """Median milliseconds of the curve alone, the JSON answer and the chart."""
    def core() -> object:
        return risk_curve(inputs["space"].size, inputs["from"], inputs["to"],
                          inputs["points"], inputs["spacing"] or "log")

    curve = median_seconds(core, CURVE_REPEATS) * 1e3
    answer = median_seconds(lambda: renderer.render(question, inputs, context),
                            CURVE_REPEATS) * 1e3
    chart = median_seconds(lambda: renderer.render_chart(question, inputs, context),
                           CURVE_REPEATS) * 1e3
    return curve, answer, chart


def curves_table(registry: Registry, renderer: Renderer, context: Context) -> float:
    """Print the curves' table; the worst ratio of a chart to its target."""
    question = registry["curves"]
    print("\n| curve | curve (ms) | answer (ms) | chart (ms) | chart / 100 ms |")
    print("|---|---:|---:|---:|---:|")
    worst = 0.0
    for label, query in CURVES:
        inputs = question.load({name: [text] for name, text in query.items()})
        curve, answer, chart = curve_timings(question, inputs, renderer, context)
        worst = max(worst, chart / CHART_TARGET_MS)
        print(f"| {label} | {curve:.1f} | {answer:.1f} | {chart:.1f} "
              f"| {chart / CHART_TARGET_MS:.2f} |")
    return worst


def main() -> int:
    registry = default_registry()
    renderer = renderer_for(registry)
    question = registry["budgets"]
    context = Context()
    print("| budget | projection (ms) | answer (ms) | answer / 20 ms | chart (ms) | "
          "chart / 100 ms |")
    print("|---|---:|---:|---:|---:|---:|")
    worst = 0.0
    for label, query in CASES:
        inputs = question.load({name: [text] for name, text in query.items()})
        projection, answer, chart = timings(question, inputs, renderer, context)
        worst = max(worst, answer / ANSWER_TARGET_MS, chart / CHART_TARGET_MS)
        print(f"| {label} | {projection:.1f} | {answer:.1f} | {answer / ANSWER_TARGET_MS:.2f} "
              f"| {chart:.1f} | {chart / CHART_TARGET_MS:.2f} |")
    worst = max(worst, curves_table(registry, renderer, context))
    print(f"\nworst ratio to target: {worst:.2f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
