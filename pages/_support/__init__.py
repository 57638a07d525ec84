"""Plain helpers behind the dashboard pages; nothing here but ``shell.py`` imports streamlit.

The Streamlit pages (``app.py`` and ``pages/``) only read widgets, keep state and lay out figures; what they
compute comes from these modules or from the engine: ``inputs`` (input sets), ``edits`` (editable tables, their
checks, the files with the edits), ``city_edits`` (districts, proposed well doublets and prices), ``cache`` (the session's solve cache and saved runs), ``describe`` (runs in
words), ``tables`` (result tables for reading), ``library`` (the saved runs, downloads), ``jobs`` (cancellable
long jobs), ``shell`` (what every page does first).

Session state of the dashboard
------------------------------
The pages keep their state under these keys of ``st.session_state`` (plain Python values, no widgets):

``hm_input``
    The input set the set-up page works on: an :class:`~pages._support.inputs.InputSet` (label, scenario
    files as bytes, the validated :class:`~engine.scenario.inputs.Scenario` or None, the problems table, the
    bundle manifest).
``hm_setup``
    The set-up choices, kept while the planner visits other pages: ``cost_case``, ``objective``,
    ``co2_cap_t_per_a``, ``full_year``, ``typical_days``, ``technology_table``, ``well_table``,
    ``district_table``, ``new_wells`` (the edited tables as DataFrames), ``prices``
    (:class:`~pages._support.city_edits.PriceEdits`) and ``technology_base``, ``well_base``, ``district_base``,
    ``new_wells_base``, ``prices_base`` (the data the table editors were started from; it stays fixed while an
    editor lives, so the browser keeps the edits; ``new_wells_round`` renews the doublet editor after a click on
    the map). :func:`pages._support.edits.files_for_setup` gives the scenario files with all of these edits.
``hm_solved``
    The session's solve cache, ``{request key: SolvedRun}`` (see :func:`~pages._support.cache.request_key`
    and :func:`~pages._support.cache.solve_with_cache`), so that going back to a cost case already solved is
    instant.
``hm_current``
    The request key of the newest solve: the "current run", shown on the results page until it is saved.
``hm_scenarios``
    ``{files digest: Scenario}``: scenarios already read from a saved run's files (for maps and colours).
``hm_loaded``
    ``{run id: RunResult}``: saved runs already read from the library in this session.
``hm_figures``
    ``{figure key: figure, table or folium map}``: what the Compare and Groundwater pages drew, by the runs'
    fingerprints and the options (:func:`~pages._support.cache.figure_key`), so that a second visit draws the
    cached objects instead of building them again (maps come back as copies: :func:`~pages._support.cache.cached_map`).
``hm_flash``, ``hm_flash_error``
    A short message (saved, renamed, deleted ...; or a refusal) shown once on the next page run.
``hm_compare``
    ``{"runs": [run ids], "baseline": run id}``: the comparison's choice, kept while the planner visits other
    pages (Streamlit forgets a widget's state once its page is left).
``hm_plan_pathways``, ``hm_plan_designations``, ``hm_heat_plan``
    The heat-plan page's pathways and designations, and the plan it shows last (see :mod:`pages._support.plan`);
    the Share page adds ``hm_heat_plan`` to the HTML summary.
``hm_shell``, ``hm_goto``
    True once ``app.py`` has set up the navigation in this session; the page to go to when a page was opened by
    its address before that (Streamlit then runs the page file on its own, without the navigation).

Widget keys start with the page's short name (``setup_``, ``results_``, ``compare_``, ``share_``, ``plan_``).

Everything shown is screening-level: :data:`engine.cautions.RESULTS_LINE` goes on every page.
"""
