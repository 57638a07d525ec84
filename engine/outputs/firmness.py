"""How firm a run's technology split is, for reading: the table and the sentence the Run results page and the
report show beside a run's near-optimal ranges (:func:`engine.studies.alternatives.run_firmness`;
docs/model.md section 8)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from engine.model.results import RunResult


def firmness_table(ranges, result: RunResult, names: dict | None = None) -> pd.DataFrame:
    """Each technology's city heat in ``result`` beside the least and the most of it among the plans within the
    cost slack (:meth:`engine.studies.alternatives.NearOptimalRanges.technology_heat`), for reading; ``names``
    maps technology ids to display names."""
    heat = ranges.technology_heat()
    own = result.heat_by_technology_mwh_per_a()
    run = heat["technology_id"].map(lambda t: float(own.get(t, 0.0))).to_numpy(float)
    shown = np.maximum(np.abs(run), heat["maximum_mwh_per_a"].abs().to_numpy(float)) > 0.5
    heat, run = heat[shown], run[shown]
    base = np.where(run > 0.5, run, np.nan)
    names = names or {}
    return pd.DataFrame({
        "technology": [names.get(str(t), str(t)) for t in heat["technology_id"]],
        "this run [MWh/a]": run,
        "least [MWh/a]": heat["minimum_mwh_per_a"].to_numpy(float),
        "most [MWh/a]": heat["maximum_mwh_per_a"].to_numpy(float),
        "least against this run [%]": 100.0 * (heat["minimum_mwh_per_a"].to_numpy(float) - base) / base,
        "most against this run [%]": 100.0 * (heat["maximum_mwh_per_a"].to_numpy(float) - base) / base,
    })


def firmness_summary(table: pd.DataFrame, slack_pct: float) -> str:
    """One sentence naming the least and the most firm technologies of a :func:`firmness_table` (by the width of
    their range against the run's heat); empty when no technology has heat in the run."""
    width = (table["most against this run [%]"] - table["least against this run [%]"]).dropna()
    if width.empty:
        return ""
    order = width.sort_values(ascending=False).index

    def name(i) -> str:
        row = table.loc[i]
        return (f"{row['technology']} ({row['least against this run [%]']:+.0f} % / "
                f"{row['most against this run [%]']:+.0f} %)")

    least = [name(i) for i in order[:2]]
    text = (f"Least firm within +{slack_pct:g} % of the least cost: {', '.join(least)}. The model leaves their "
            "heat open: read those figures as one of many near-equal plans.")
    if len(order) > 2:
        text += f" Most firm: {name(order[-1])}."
    return text
