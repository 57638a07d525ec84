"""The heat-plan chapter of the HTML summary: pathway figures, the designation map and the district table.

:func:`engine.outputs.report.html_report` adds this chapter when it is given a :class:`HeatPlan`. The figures are
those of :mod:`engine.outputs.plan_figures` (the dashboard's "Heat plan" page shows the same); the map is inline
SVG so that the report opens offline. Names from the user are HTML-escaped.
"""

from __future__ import annotations

from dataclasses import dataclass

import pandas as pd

from engine import cautions
from engine.outputs.figures import FIGURE_CONFIG, escape
from engine.outputs.htmlpack import FigureSet
from engine.outputs.plan_figures import (
    co2_path_figure,
    designation_table,
    plan_capacity_figure,
    plan_cost_figure,
    plan_heat_figure,
    svg_designation_map,
)


@dataclass
class HeatPlan:
    """A pathway and/or a designation, with the scenario they were computed on (for names and shapes)."""

    scenario: object
    pathway: object = None
    """:class:`engine.studies.pathway.PathwayResult` or None."""
    designation: object = None
    """:class:`engine.studies.designation.Designation` or None."""
    designation_year: str = ""
    """What the designation stands for, in words ("2040 as in the pathway", "the scenario as given")."""

    @property
    def empty(self) -> bool:
        return self.pathway is None and self.designation is None


def _table(table: pd.DataFrame) -> str:
    head = "".join(f"<th>{escape(c)}</th>" for c in table.columns)
    rows = []
    for values in table.itertuples(index=False):
        cells = "".join(f"<td class='num'>{v:.2f}</td>" if isinstance(v, float) else f"<td>{escape(v)}</td>"
                        for v in values)
        rows.append(f"<tr>{cells}</tr>")
    return (f"<div class='scroll'><table class='data'><thead><tr>{head}</tr></thead>"
            f"<tbody>{''.join(rows)}</tbody></table></div>")


def heat_plan_chapter(plan: HeatPlan, technologies=None, figures: FigureSet | None = None) -> str:
    """The chapter as an HTML fragment (``<h2 id='heatplan'>`` and what follows); its figures are added to
    ``figures``, the page's :class:`engine.outputs.htmlpack.FigureSet` (a new one, dropped, when None)."""
    figures = figures if figures is not None else FigureSet(FIGURE_CONFIG)
    technologies = technologies if technologies is not None else getattr(plan.scenario, "technologies", None)
    body = ["<h2 id='heatplan'>Heat plan</h2>",
            f"<div class='caution'><b>Caution.</b> {escape(cautions.HEAT_PLAN)}</div>"]
    pathway = plan.pathway
    if pathway is not None:
        mode = "perfect foresight" if pathway.mode == "foresight" else "myopic (year by year)"
        body.append(f"<h3>Pathway {escape(', '.join(map(str, pathway.years)))}</h3>")
        body.append(f"<p class='note'>Cost case {escape(pathway.cost_case)}, {escape(mode)}. "
                    f"{escape(pathway.message)}</p>")
        if pathway.solved:
            for fig in (plan_capacity_figure(pathway, technologies), plan_heat_figure(pathway, technologies),
                        co2_path_figure(pathway), plan_cost_figure(pathway)):
                body.append(figures.add(fig))
    designation = plan.designation
    if designation is not None:
        where = f" ({escape(plan.designation_year)})" if plan.designation_year else ""
        body.append(f"<h3>Supply areas and their grades{where}</h3>")
        body.append(f"<p class='note'>Cost cases: {escape(', '.join(designation.cost_cases))}. Win share: share of "
                    "the cost cases in which the area's supply carries most of the district's heat; margin: extra "
                    "levelised cost of the next-best supply in the first cost case; network share: the range "
                    "found among plans within the cost slack. The grading rule is in docs/designation.md.</p>")
        body.append("<div class='maps'>" + svg_designation_map(plan.scenario, designation, width_px=640,
                                                               title="Designation map") + "</div>")
        body.append(_table(designation_table(designation, plan.scenario)))
    return "".join(body)
