"""What makes the HTML summary one light offline file: plotly.js once, the figures' data in one packed block.

The summary (:func:`engine.outputs.report.html_report`) draws bar and line charts only, so it carries plotly.js's
official partial bundle with the ``bar``, ``pie`` and ``scatter`` traces (``engine/outputs/assets/``, 1.2 MB
instead of the 4.8 MB of the full library the installed plotly ships). The library and the figures travel
gzip-compressed (RFC 1952) and base64-encoded (RFC 4648) inside two inert ``<script>`` elements; one small
script at the end of the page unpacks them with the browser's own ``DecompressionStream`` (WHATWG Compression
Streams; Chromium 80, Firefox 113, Safari 16.4), runs the library and draws each figure into its placeholder.

Figures are collected in a :class:`FigureSet` while the page is written: each :meth:`FigureSet.add` returns the
placeholder ``<div>``; the figures' specifications (data, layout, config) go together into one JSON array, their
floating-point numbers rounded to :data:`SIGNIFICANT_DIGITS` significant digits (more than any hover label or
axis shows), so that the figures compress as one text.

gzip rather than raw deflate: the two differ by the 18 bytes of gzip's header and trailer per block, and gzip is
the older of the two formats the browsers' ``DecompressionStream`` reads.
"""

from __future__ import annotations

import base64
import functools
import gzip
import json
import math
import re
from pathlib import Path

import numpy as np

ASSETS = Path(__file__).with_name("assets")
PLOTLY_JS_FILE = ASSETS / "plotly-basic.min.js"
"""plotly.js's basic partial bundle (version and origin: ``engine/outputs/assets/README.md``)."""
PLOTLY_JS_VERSION = "4.1.1"

SIGNIFICANT_DIGITS = 6
"""Significant digits kept of each number in a figure's data (the hover labels show at most five)."""

PLOTLY_ID = "heatmosaic-plotly"
FIGURES_ID = "heatmosaic-figures"
PACKED_TYPE = "application/gzip;base64"
"""The ``type`` of the two packed scripts: not JavaScript, so the browser leaves them alone."""


@functools.lru_cache(maxsize=1)
def bundle_trace_types() -> frozenset[str]:
    """The trace types the bundle registers (each trace module declares ``moduleType:"trace",name:"<type>"``)."""
    text = PLOTLY_JS_FILE.read_text(encoding="utf-8")
    return frozenset(re.findall(r'moduleType:"trace",name:"([a-z0-9]+)"', text))


def pack(data: bytes) -> str:
    """``data`` gzip-compressed (level 9, no time stamp, so the same input gives the same text) and base64-encoded."""
    return base64.b64encode(gzip.compress(data, compresslevel=9, mtime=0)).decode("ascii")


def unpack(text: str) -> bytes:
    """The inverse of :func:`pack`."""
    return gzip.decompress(base64.b64decode(text))


@functools.lru_cache(maxsize=1)
def packed_plotly_js() -> str:
    """The bundle, packed; made once per process (compressing takes about a tenth of a second)."""
    return pack(PLOTLY_JS_FILE.read_bytes())


def _round(value, digits: int):
    if isinstance(value, float):
        if value == 0.0 or not math.isfinite(value):
            return value if math.isfinite(value) else None
        rounded = round(value, digits - 1 - int(math.floor(math.log10(abs(value)))))
        return int(rounded) if rounded.is_integer() and abs(rounded) < 2**53 else rounded
    return value


def compact(value, digits: int = SIGNIFICANT_DIGITS):
    """A figure's plotly JSON (``fig.to_plotly_json()``) with plain lists of rounded numbers for numpy arrays and
    floats, so that ``json.dumps`` writes it short."""
    if isinstance(value, dict):
        return {k: compact(v, digits) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [compact(v, digits) for v in value]
    if isinstance(value, np.ndarray):
        if value.dtype.kind == "M":  # time stamps as ISO 8601 text, as plotly writes them
            return np.datetime_as_string(value).ravel().tolist()
        if value.dtype.kind in "fiub":
            values = value.astype(float).ravel().tolist() if value.dtype.kind == "f" else value.ravel().tolist()
            return [_round(v, digits) for v in values] if value.ndim == 1 else compact(value.tolist(), digits)
        return compact(value.tolist(), digits)
    if isinstance(value, np.generic):
        return compact(value.item(), digits)
    if isinstance(value, float):
        return _round(value, digits)
    if hasattr(value, "isoformat"):  # pandas and datetime time stamps, as plotly writes them
        return value.isoformat()
    return value


class FigureSet:
    """The figures of one page, in the order they were added."""

    def __init__(self, config: dict | None = None):
        self.config = dict(config or {})
        self.specs: list[dict] = []

    def add(self, fig) -> str:
        """Keep ``fig`` and return its placeholder (a ``<div>`` of the figure's height)."""
        height = int(fig.layout.height or 450)
        ident = f"heatmosaic-figure-{len(self.specs)}"
        spec = compact(fig.to_plotly_json())
        self.specs.append({"id": ident, "data": spec.get("data", []), "layout": spec.get("layout", {}),
                           "config": self.config})
        return (f"<div class='figure'><div id='{ident}' class='plotly-graph-div' "
                f"style='height:{height}px; width:100%;'></div></div>")

    def trace_types(self) -> set[str]:
        """Every trace type among the figures (plotly's default type is ``scatter``)."""
        return {trace.get("type", "scatter") for spec in self.specs for trace in spec["data"]}

    def payload(self) -> str:
        """The figures as one JSON array, packed."""
        text = json.dumps(self.specs, separators=(",", ":"), ensure_ascii=False, allow_nan=False)
        return pack(text.encode("utf-8"))

    def scripts(self) -> str:
        """The packed library, the packed figures and the script that draws them: the end of the page's body."""
        missing = self.trace_types() - bundle_trace_types()
        if missing:
            raise ValueError(f"the summary's plotly.js bundle has no trace type {sorted(missing)}: vendor a bundle "
                             "that has (engine/outputs/assets/README.md)")
        # base64 text holds no "<", so neither packed block can close its script element early
        return (f"<script type='{PACKED_TYPE}' id='{PLOTLY_ID}'>{packed_plotly_js()}</script>"
                f"<script type='{PACKED_TYPE}' id='{FIGURES_ID}'>{self.payload()}</script>"
                f"<script type='text/javascript'>{UNPACK_JS}</script>")


def read_figures(html: str) -> list[dict]:
    """The figure specifications packed in a page written with :class:`FigureSet` (for tests and tools)."""
    found = re.search(rf"<script type='{re.escape(PACKED_TYPE)}' id='{FIGURES_ID}'>([A-Za-z0-9+/=]*)</script>", html)
    if found is None:
        return []
    return json.loads(unpack(found.group(1)).decode("utf-8"))


def read_plotly_js(html: str) -> str | None:
    """The plotly.js packed in such a page, or None."""
    found = re.search(rf"<script type='{re.escape(PACKED_TYPE)}' id='{PLOTLY_ID}'>([A-Za-z0-9+/=]+)</script>", html)
    return None if found is None else unpack(found.group(1)).decode("utf-8")


# Unpacks the library and the figures (Compression Streams, gzip), runs the library as a script of its own, then
# draws each figure into its placeholder. Written for this report.
UNPACK_JS = """
(function () {
  function unpacked(id) {
    var text = atob(document.getElementById(id).textContent.trim());
    var bytes = new Uint8Array(text.length);
    for (var i = 0; i < text.length; i++) { bytes[i] = text.charCodeAt(i); }
    return new Response(new Blob([bytes]).stream().pipeThrough(new DecompressionStream('gzip'))).text();
  }
  window.PlotlyConfig = {MathJaxConfig: 'local'};
  Promise.all([unpacked('%s'), unpacked('%s')]).then(function (parts) {
    var script = document.createElement('script');
    script.textContent = parts[0];
    document.head.appendChild(script);
    JSON.parse(parts[1]).forEach(function (f) {
      var div = document.getElementById(f.id);
      if (div) { window.Plotly.newPlot(div, f.data, f.layout, f.config); }
    });
  });
})();
""" % (PLOTLY_ID, FIGURES_ID)
