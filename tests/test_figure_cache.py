"""The pages' figure cache (pages._support.cache): the same runs and options give the cached object, a changed
run or option a new one, and a cached folium map comes back as a copy that renders as the map built afresh.

The references are the figure functions themselves (a figure from the cache equals the one built directly for the
same run) and folium's own rendering of a freshly built map. No timing is asserted: the switch times are measured
by bench/dashboard.py.
"""

from __future__ import annotations

import dataclasses
import re

from engine.outputs.figures import cost_breakdown_figure, load_curve_figure
from engine.outputs.maps import district_map
from pages._support.cache import (
    FIGURE_CACHE_SIZE,
    cached_figure,
    cached_map,
    figure_key,
    result_fingerprint,
)
from test_figures import TECHNOLOGIES, synthetic_result, two_runs
from test_maps import synthetic_scenario


class _Builds:
    """A build function that counts its calls."""

    def __init__(self, build):
        self.build, self.calls = build, 0

    def __call__(self):
        self.calls += 1
        return self.build()


def test_same_runs_and_options_give_the_cached_figure():
    runs = two_runs()
    cache: dict = {}
    build = _Builds(lambda: cost_breakdown_figure(runs, by="run"))
    first = cached_figure(cache, figure_key("cost", runs), build)
    # the same runs read again (another object with the same content, as from the library) hit the cache
    again = cached_figure(cache, figure_key("cost", two_runs()), build)
    assert again is first and build.calls == 1
    assert first.to_plotly_json() == cost_breakdown_figure(runs, by="run").to_plotly_json()


def test_a_changed_run_or_option_gives_a_new_figure():
    """Another solution (more heat pump in one district), another run name, a changed district table or another
    option each give another key; the figure built for it is that run's figure."""
    runs = two_runs()
    base = figure_key("curve", runs, district=None, week=None)
    changed = dict(runs, reference=synthetic_result(heat_pump_kw=(260.0, 60.0)))
    assert figure_key("curve", changed, district=None, week=None) != base
    assert figure_key("curve", {"renamed": runs["reference"], "more heat pumps": runs["more heat pumps"]},
                      district=None, week=None) != base
    assert figure_key("curve", runs, district="d1", week=None) != base
    assert figure_key("curve", runs, district=None, week=3) != base
    assert figure_key("other", runs, district=None, week=None) != base
    tables = dict(runs["reference"].tables)
    tables["districts"] = tables["districts"].assign(name=["A", "B"])
    renamed_districts = dataclasses.replace(runs["reference"], tables=tables)
    assert result_fingerprint(renamed_districts) != result_fingerprint(runs["reference"])
    assert result_fingerprint(synthetic_result()) == result_fingerprint(synthetic_result())

    cache: dict = {}
    cached_figure(cache, base, lambda: load_curve_figure(runs["reference"], TECHNOLOGIES))
    key = figure_key("curve", changed, district=None, week=None)
    new = cached_figure(cache, key, lambda: load_curve_figure(changed["reference"], TECHNOLOGIES))
    assert new.to_plotly_json() == load_curve_figure(changed["reference"], TECHNOLOGIES).to_plotly_json()
    assert new.to_plotly_json() != cache[base].to_plotly_json()


def test_the_cache_keeps_the_newest_figures():
    cache: dict = {}
    for k in range(FIGURE_CACHE_SIZE + 3):
        cached_figure(cache, f"figure {k}", lambda k=k: k)
    assert len(cache) == FIGURE_CACHE_SIZE
    assert "figure 0" not in cache and f"figure {FIGURE_CACHE_SIZE + 2}" in cache


def test_a_cached_map_is_a_copy_that_renders_as_a_fresh_map():
    """streamlit-folium renames the elements of the map it renders, so the cache hands out copies: changing one
    leaves the next untouched, and each renders (ids aside) exactly as a map built afresh."""
    scenario, result = synthetic_scenario(), synthetic_result()
    cache: dict = {}
    build = _Builds(lambda: district_map(scenario, result, technologies=TECHNOLOGIES))
    key = figure_key("map", {"run": result})
    first = cached_map(cache, key, build)
    first._name = "renamed"  # what st_folium does to the map it gets
    second = cached_map(cache, key, build)
    assert build.calls == 1 and second is not first and second._name != "renamed"

    def ids_out(html: str) -> str:
        return re.sub(r"_[0-9a-f]{32}", "_ID", html)

    fresh = district_map(scenario, result, technologies=TECHNOLOGIES).get_root().render()
    assert ids_out(second.get_root().render()) == ids_out(fresh)
