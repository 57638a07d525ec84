"""Peak memory of reading a scenario whose hourly file is near the size limit (issue: memory per input byte).

Prints one line per case: the file size, the tracemalloc peak of ``load_scenario`` and their ratio. Python
allocations only (numpy and pandas buffers are traced too, as they allocate through Python's allocator hooks);
the process's peak resident set (``ru_maxrss``) is printed as well. Run: ``python bench/memory.py [MiB]``.
"""

from __future__ import annotations

import resource
import shutil
import sys
import tempfile
import tracemalloc
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from engine.scenario import load_scenario  # noqa: E402
from engine.scenario.problems import InputError  # noqa: E402

TINY = ROOT / "tests" / "fixtures" / "tiny_city"


def long_hourly(path: Path, mib: float) -> None:
    """hourly.csv with far too many rows (the shape of the original report)."""
    line = "1234,5.25,101.5,210.25,81.5,100.25\n"
    rows = int(mib * 2**20 / len(line))
    header = (TINY / "hourly.csv").read_text().splitlines()[0]
    with open(path, "w") as handle:
        handle.write(header + "\n")
        handle.write(line * rows)


def wide_demand(path: Path, mib: float) -> None:
    """heat_demand_hourly.csv with one year and many columns of unknown districts (refused after parsing)."""
    per_row = int(mib * 2**20 / 8760 / 9)
    rng = np.random.default_rng(0)
    values = np.round(rng.uniform(100, 999, (8760, per_row)), 3)
    with open(path, "w") as handle:
        handle.write("hour," + ",".join(f"d{k}" for k in range(per_row)) + "\n")
        for hour in range(8760):
            handle.write(f"{hour}," + ",".join(f"{v:.3f}" for v in values[hour]) + "\n")


def measure(case: str, make, mib: float) -> None:
    with tempfile.TemporaryDirectory() as folder:
        scenario = Path(shutil.copytree(TINY, Path(folder) / "city"))
        target = scenario / ("hourly.csv" if case == "long hourly.csv" else "heat_demand_hourly.csv")
        make(target, mib)
        size = target.stat().st_size
        tracemalloc.start()
        outcome = "loaded"
        try:
            load_scenario(scenario)
        except InputError as error:
            outcome = f"refused: {error.problems[0].message[:70]}"
        _, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"{case:24s} file {size / 2**20:6.1f} MiB  peak {peak / 2**20:7.1f} MiB  ratio {peak / size:5.1f}  "
          f"(process max RSS so far {rss:.0f} MiB)  {outcome}")


if __name__ == "__main__":
    mib = float(sys.argv[1]) if len(sys.argv) > 1 else 20.0
    measure("long hourly.csv", long_hourly, mib)
    measure("wide demand file", wide_demand, mib)
