"""The cautions that go with every result: one home for their wording.

Results of heatmosaic can hurt someone when read as more than they are (a well permit, an aquifer temperature, an
investment), so every output carries one of these texts: the dashboard pages, the HTML report, a shared bundle's
manifest, the map legends and the plume study's notes. Change the wording here and every output follows.
"""

RESULTS = (
    "Screening-level results for early planning. Well yields, aquifer temperatures, permits and investment "
    "figures must be confirmed against local codes, by the water authority and by licensed engineers before "
    "any decision."
)
"""The long form: the report, a bundle's manifest and the dashboard's start page."""

RESULTS_LINE = (
    "Screening results for early planning only. Well permits, aquifer temperatures and investments must be "
    "checked against local codes, with the water authority and by licensed engineers."
)
"""The one line every dashboard page shows."""

WELLS = "Wells and plumes: screening estimate. Permits defer to the water authority."
"""The short caution beside well markers, plume outlines and well tables."""

WELL_POPUP = "Screening estimate; permits and designs defer to the water authority and licensed engineers."
"""The last line of a well's popup on the map."""

GROUNDWATER = (
    "Screening estimate: not a substitute for the numerical groundwater model and the permit procedure the "
    "water authority requires. Defer to the water authority, local codes and licensed engineers."
)
"""Permit screening and interference checks of well doublets (the groundwater page and its study)."""

PLUME = (
    "Screening estimate only: an analytic plume model in a uniform, homogeneous aquifer. It does not replace "
    "the numerical groundwater model a well permit requires; defer to the water authority, local codes and "
    "licensed engineers."
)
"""The first note of every plume result (:func:`engine.physics.plume.validity_notes`)."""

HEAT_PLAN = (
    "The heat plan is screening-level: the pathway and the supply areas are planning proposals for the "
    "municipality, the network operator and the local authorities to decide, not decisions. Investments, wells and "
    "networks must be checked against local codes, with the water authority and by licensed engineers."
)
"""The heat-plan page and the report's heat-plan chapter."""

HEAT_PLAN_SHORT = "A designation is a screening-level planning proposal, not a decision."
"""The line under the designation map's legend."""

YEAR_CHECK = (
    "The full-year check runs the plan on the same inputs: it confirms the hours the typical days leave out, not "
    "the inputs. Designs defer to licensed engineers, well permits to the water authority."
)
"""Under a plan's check over the full year (the run results page)."""

FIRMNESS = (
    "The ranges say which figures this model and these inputs fix, not which plans are buildable: a plan at either "
    "end of a range still needs its wells, network connections and investments checked with the water authority, "
    "the network operator and licensed engineers."
)
"""Under the near-optimal ranges of a run's technologies (the run results page)."""
