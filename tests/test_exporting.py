"""Spreadsheet-friendly outputs: xlsx read back with openpyxl, rounded CSV, Parquet units."""

import json

import pandas as pd
import pyarrow.parquet as pq
from click.testing import CliRunner
from openpyxl import load_workbook

from torqlog.cli import cli
from torqlog.present.exporting import to_csv_text, write_parquet, write_xlsx

TABLE = pd.DataFrame({"cycle": [1, 2], "energy_swing_J": [8130.031234567, 8147.4],
                      "cs": [0.045478331839988744, 0.12], "inertia_kgm2": [310.0, 1e-4],
                      "flag": ["", "gap"]})


def test_xlsx_has_units_row_numbers_and_options_sheet(tmp_path):
    p = write_xlsx(tmp_path / "r.xlsx", {"cycles": TABLE}, {"quantile": 0.95,
                                                           "cycle_source": "angle"})
    wb = load_workbook(p)
    assert wb.sheetnames == ["cycles", "options"]
    ws = wb["cycles"]
    rows = list(ws.iter_rows(values_only=True))
    assert rows[0] == ("cycle", "energy_swing_J", "cs", "inertia_kgm2", "flag")
    assert rows[1] == ("-", "J", "-", "kg·m²", "-")  # the units row
    assert rows[2][:4] == (1, 8130.031234567, 0.045478331839988744, 310.0)
    assert isinstance(rows[2][1], float)  # numbers stay numbers, at full precision
    assert ws.freeze_panes == "A3"
    assert ws["B3"].number_format == "#,##0.0"
    assert ws["C3"].number_format == "0.0000"
    opts = list(wb["options"].iter_rows(values_only=True))
    assert opts[0] == ("option", "value") and ("quantile", "0.95") in opts


def test_csv_rounds_and_writes_units_row():
    text = to_csv_text(TABLE, units_row=True)
    lines = text.splitlines()
    assert lines[1] == ",J,,kg·m²,"
    assert lines[2] == "1,8130.03,0.0454783,310,"
    full = to_csv_text(TABLE, digits=None)
    assert "0.04547833183998874," in full  # shortest text of the same double
    assert pd.read_csv(pd.io.common.StringIO(full))["cs"][0] == 0.045478331839988744


def test_parquet_keeps_units_in_column_metadata(tmp_path):
    p = write_parquet(tmp_path / "r.parquet", TABLE, {"quantile": 0.95})
    schema = pq.read_schema(p)
    assert schema.field("energy_swing_J").metadata[b"unit"] == b"J"
    assert schema.field("cs").metadata[b"unit"] == b""
    assert json.loads(schema.metadata[b"torqlog.options"]) == {"quantile": 0.95}
    assert pq.read_table(p).to_pandas()["energy_swing_J"].tolist() == \
        TABLE["energy_swing_J"].tolist()


def test_cli_xlsx_needs_a_file_and_writes_sheets(tmp_path):
    args = ["flywheel", "--inertia", "310", "--speed-rpm", "450", "--material",
            "ductile-iron", "--outer-diameter", "1.4", "--bore", "0.16"]
    res = CliRunner().invoke(cli, [*args, "--format", "xlsx"])
    assert res.exit_code == 2
    assert res.stderr == "Error: --format xlsx writes a file: give -o FILE\n"
    out = tmp_path / "fw.xlsx"
    res = CliRunner().invoke(cli, [*args, "--format", "xlsx", "-o", str(out)])
    assert res.exit_code == 0, res.output
    wb = load_workbook(out)
    assert wb.sheetnames == ["summary", "options"]
    rows = {r[0]: r[1:] for r in wb["summary"].iter_rows(values_only=True)}
    assert rows["mass_kg"][1] == "kg" and isinstance(rows["mass_kg"][0], float)
