"""heatmosaic engine: inputs, physics, the district LP, results and the scenario store.

The engine never imports streamlit; the dashboard in ``app.py`` and ``pages/`` is a thin shell around it.
"""

__version__ = "0.1.0"
