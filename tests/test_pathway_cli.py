"""``python -m engine pathway`` and ``python -m engine designate``: files written, bad input refused plainly."""

from __future__ import annotations

import shutil

import pandas as pd

from engine.cli import main
from engine.scenario.folder import DEMO_DIR


def test_pathway_writes_both_tables(tmp_path, capsys):
    out = tmp_path / "out"
    assert main(["pathway", "demo", "--typical-days", "2", "--out", str(out), "--quiet"]) == 0
    pathway = pd.read_csv(out / "pathway.csv")
    assert list(pathway.columns[:6]) == ["year", "total_cost_eur_per_a", "co2_t_per_a", "investment_eur",
                                         "heat_demand_mwh_per_a", "unserved_heat_mwh_per_a"]
    assert list(pathway["year"]) == [2030, 2035, 2040]
    assert any(c.startswith("heat_") and c.endswith("_mwh_per_a") and c != "heat_demand_mwh_per_a"
               for c in pathway.columns)
    capacity = pd.read_csv(out / "capacity.csv")
    assert list(capacity.columns) == ["year", "district_id", "technology_id", "capacity_kw", "new_kw", "retired_kw"]


def test_pathway_years_option_and_myopic(tmp_path):
    out = tmp_path / "out"
    assert main(["pathway", "demo", "--years", "2035,2040", "--myopic", "--typical-days", "2", "--out", str(out),
                 "--quiet"]) == 0
    assert list(pd.read_csv(out / "pathway.csv")["year"]) == [2035, 2040]


def test_years_out_of_order_refused_with_the_year(tmp_path, capsys):
    code = main(["pathway", "demo", "--years", "2040,2035", "--out", str(tmp_path / "o"), "--quiet"])
    err = capsys.readouterr().err
    assert code == 2 and "2035" in err and "--years" in err and "Traceback" not in err
    code = main(["pathway", "demo", "--years", "twenty", "--out", str(tmp_path / "o"), "--quiet"])
    assert code == 2 and "--years" in capsys.readouterr().err


def test_bad_pathway_csv_names_file_row_and_column(tmp_path, capsys):
    folder = tmp_path / "city"
    shutil.copytree(DEMO_DIR, folder)
    with open(folder / "pathway.csv", "a") as handle:
        handle.write("2032,,1.0,,,,,,\n")
    assert main(["validate", str(folder)]) == 2
    assert main(["pathway", str(folder), "--out", str(tmp_path / "o"), "--quiet"]) == 2
    captured = capsys.readouterr()
    assert "pathway.csv, row 7, column year: year 2032 is not a milestone year" in captured.out + captured.err


def test_designate_writes_designation_csv(tmp_path):
    out = tmp_path / "out"
    assert main(["designate", "demo", "--cost-cases", "reference,high_co2", "--typical-days", "2", "--workers", "1",
                 "--out", str(out), "--quiet"]) == 0
    table = pd.read_csv(out / "designation.csv")
    assert list(table.columns[:7]) == ["district_id", "supply_area", "grade", "win_share", "lcoh_margin_eur_per_mwh",
                                       "network_share_min", "network_share_max"]
    assert len(table) == 11


def test_designate_refuses_unknown_cost_case_and_negative_slack(tmp_path, capsys):
    assert main(["designate", "demo", "--cost-cases", "nope", "--out", str(tmp_path / "o"), "--quiet"]) == 2
    assert "nope" in capsys.readouterr().err
    assert main(["designate", "demo", "--slack-pct", "-1", "--out", str(tmp_path / "o"), "--quiet"]) == 2
