"""The command line's shared ways: tables that fit the terminal, one name for the varied key,
percentages for fractions, ``run --set/--variant/--seed``, output extensions, and progress bars.

Each figure printed is checked against the same figure reached another way (the scenario file
edited by hand, the fraction written as a decimal, the engine called directly), so a command-line
path that changed a number would fail here.
"""

from __future__ import annotations

import io
import json
import re
from pathlib import Path

import pytest
from conftest import DEMO, DEMO_LAYOUT, ROOT

from lcoe.analysis import sensitivity as se
from lcoe.cli import main, progress
from lcoe.inputs import scenario
from lcoe.outputs import tables

DEMO_PORTFOLIO = ROOT / "assumptions" / "portfolio_demo.toml"


def _cli(capsys, *argv):
    rc = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return rc, out, err


def _one_line_error(rc, out, err, *parts):
    assert rc == 2, err
    assert out == ""
    assert err.startswith("error: ") and err.count("\n") == 1, err
    for p in parts:
        assert p in err, err


# --------------------------------------------------------------------------- the table layout

def _cols(n):
    return [tables.col("Label", align="<")] + [tables.col(f"c{j}", "[u]", min_width=9) for j in range(n)]


def test_render_splits_into_blocks_that_fit_and_repeat_the_labels():
    """12 columns of 9 characters at 60 columns: every line fits, each block starts with the labels,
    and each cell is printed exactly once. By hand: indent 2 + label 5 + 4 x (gap 2 + 9) = 51 <= 60,
    a fifth column would make 62, so 4 columns a block and 3 blocks."""
    rows = [[f"row{i}"] + [f"{i}.{j}" for j in range(12)] for i in range(3)]
    lines = tables.render(_cols(12), rows, width=60)
    assert max(map(len, lines)) <= 60
    blocks = "\n".join(lines).split("\n\n")
    assert len(blocks) == 3
    for b in blocks:
        assert b.splitlines()[1].lstrip().startswith("Label")            # the heads are bottom-aligned
        assert len(b.splitlines()[1].split()) == 1 + 4
        assert [line.split()[0] for line in b.splitlines()[2:]] == ["row0", "row1", "row2"]
    cells = re.findall(r"\b\d+\.\d+\b", "\n".join(lines))
    assert sorted(cells) == sorted(f"{i}.{j}" for i in range(3) for j in range(12))


def test_render_whole_when_wide_or_when_it_fits():
    rows = [["a"] + ["1"] * 12]
    assert len(tables.render(_cols(12), rows, width=None)) == 3          # two header lines, one row
    assert len(tables.render(_cols(2), rows[:1] and [["a", "1", "2"]], width=100)) == 3


def test_render_refuses_a_ragged_row():
    with pytest.raises(ValueError):
        tables.render(_cols(2), [["a", "1"]])


def test_terminal_width(monkeypatch):
    monkeypatch.delenv("COLUMNS", raising=False)
    assert tables.terminal_width(io.StringIO()) == 100                  # not a terminal
    monkeypatch.setenv("COLUMNS", "72")
    assert tables.terminal_width(io.StringIO()) == 72


@pytest.mark.parametrize("argv", [
    ["run", DEMO],
    ["run", DEMO_LAYOUT, "--trials", "0"],
    ["sweep", DEMO, "--key", "wind.mean_speed_mps", "6", "8", "3", "--breakeven"],
    ["tornado", DEMO],
    ["solve", DEMO, "--target", "equity_irr=12%", "--key", "revenue.ppa_price_per_mwh"],
    ["portfolio", DEMO_PORTFOLIO, "--trials", "300", "--workers", "0"],
])
@pytest.mark.parametrize("width", [100, 80])
def test_every_table_fits_the_terminal(capsys, monkeypatch, argv, width):
    """Off a terminal the width is 100 columns; COLUMNS narrows it: no line is wider."""
    if width == 100:
        monkeypatch.delenv("COLUMNS", raising=False)
    else:
        monkeypatch.setenv("COLUMNS", str(width))
    rc, out, err = _cli(capsys, *argv)
    assert rc == 0, err
    assert max(len(line) for line in out.splitlines()) <= width


def test_wide_prints_the_yearly_table_whole(capsys, monkeypatch):
    monkeypatch.delenv("COLUMNS", raising=False)
    rc, narrow, _ = _cli(capsys, "run", DEMO, "--trials", "0")
    rc2, wide, _ = _cli(capsys, "run", DEMO, "--trials", "0", "--wide")
    assert rc == rc2 == 0
    head = [line for line in wide.splitlines() if "Energy" in line and "Equity CF" in line]
    assert len(head) == 1 and len(head[0]) > 100                         # one block, all columns
    assert not any("Energy" in line and "Equity CF" in line for line in narrow.splitlines())
    # the same numbers either way: the rows of year 7 hold the same cells
    cells = lambda text: sorted(c for line in text.splitlines() if re.match(r"^\s+7\s", line)  # noqa: E731
                                for c in line.split()[1:])
    assert cells(narrow) == cells(wide)


# --------------------------------------------------------------------------- one name for the key

def _json(capsys, *argv):
    rc, out, err = _cli(capsys, *argv, "--json")
    assert rc == 0, err
    return json.loads(out)


def test_sweep_percentages_equal_the_fractions(capsys):
    a = _json(capsys, "sweep", DEMO, "--key", "finance.discount_rate", "5%", "9%", "3")
    b = _json(capsys, "sweep", DEMO, "--key", "finance.discount_rate", "0.05", "0.09", "3")
    assert [r["value"] for r in a["rows"]] == pytest.approx([0.05, 0.07, 0.09], rel=1e-15)
    assert a["rows"] == b["rows"]


def test_a_percentage_for_a_key_that_is_no_fraction_is_refused(capsys):
    _one_line_error(*_cli(capsys, "sweep", DEMO, "--key", "wind.mean_speed_mps", "5%", "9", "3"),
                    "START = '5%'", "wind.mean_speed_mps is not one")


def test_the_sweep_former_spelling_gets_a_hint(capsys):
    rc, out, err = _cli(capsys, "sweep", DEMO, "wind.mean_speed_mps", "5", "9", "3")
    assert rc == 2 and out == ""
    assert "name the key with --key" in err


def test_sweep_breakeven_is_kept_beside_metrics(capsys):
    """--breakeven with --metrics equity_irr: both columns, the break-even price as the engine solves it."""
    d = _json(capsys, "sweep", DEMO, "--key", "capex.turbine_per_kw", "900", "1100", "2", "--breakeven",
              "--metrics", "equity_irr")
    direct = se.sweep(scenario.load(DEMO), "capex.turbine_per_kw", [900.0, 1100.0], breakeven=True)
    assert [r["metrics"]["breakeven_ppa_price_per_mwh"] for r in d["rows"]] == \
        pytest.approx([r["metrics"]["breakeven_ppa_price_per_mwh"] for r in direct], rel=1e-12)
    rc, out, _ = _cli(capsys, "sweep", DEMO, "--key", "capex.turbine_per_kw", "900", "1100", "2", "--breakeven",
                      "--metrics", "equity_irr")
    assert rc == 0 and "Break-even PPA price" in out and "Equity IRR" in out


def test_a_cost_sweep_shows_no_energy_columns_and_a_speed_sweep_does(capsys):
    cost = _json(capsys, "sweep", DEMO, "--key", "capex.turbine_per_kw", "900", "1100", "3")
    speed = _json(capsys, "sweep", DEMO, "--key", "wind.mean_speed_mps", "6", "8", "3")
    assert cost["energy_depends_on_key"] is False and speed["energy_depends_on_key"] is True
    rc, out, _ = _cli(capsys, "sweep", DEMO, "--key", "wind.mean_speed_mps", "6", "8", "3")
    assert rc == 0 and "Elasticity" in out and "Net AEP P50" in out


def test_solve_key_and_its_former_name_agree(capsys):
    args = ["solve", DEMO, "--target", "equity_irr=12%"]
    a = _json(capsys, *args, "--key", "revenue.ppa_price_per_mwh")
    b = _json(capsys, *args, "--vary", "revenue.ppa_price_per_mwh")
    assert a == b and a["key"] == "revenue.ppa_price_per_mwh"
    _one_line_error(*_cli(capsys, *args), "--key", "name the input to vary")


def test_solve_bounds_as_percentages(capsys):
    a = _json(capsys, "solve", DEMO, "--target", "equity_irr=12%", "--key", "finance.debt.interest_rate",
              "--low", "1%", "--high", "20%")
    b = _json(capsys, "solve", DEMO, "--target", "equity_irr=12%", "--key", "finance.debt.interest_rate",
              "--low", "0.01", "--high", "0.2")
    assert a == b


def test_tornado_key_repeated_or_listed_and_its_former_name(capsys):
    keys = ["revenue.ppa_price_per_mwh", "capex.turbine_per_kw"]
    a = _json(capsys, "tornado", DEMO, "--key", keys[0], "--key", keys[1])
    b = _json(capsys, "tornado", DEMO, "--key", ",".join(keys))
    c = _json(capsys, "tornado", DEMO, "--inputs", ",".join(keys))
    assert a == b == c
    assert sorted(r["key"] for r in a["rows"]) == sorted(keys)


# --------------------------------------------------------------------------- run --set / --variant / --seed

def _edited(tmp_path, changes: dict) -> Path:
    """The demo scenario with lines changed by hand, in a folder whose ``../demo`` is the demo's data."""
    text = DEMO.read_text()
    for old, new in changes.items():
        assert text.count(old) == 1, old
        text = text.replace(old, new)
    (tmp_path / "assumptions").mkdir()
    (tmp_path / "demo").symlink_to(ROOT / "demo")
    path = tmp_path / "assumptions" / "edited.toml"
    path.write_text(text)
    return path


def test_run_set_equals_the_file_edited_by_hand(capsys, tmp_path):
    """--set capex.turbine_per_kw=1150 and finance.discount_rate=7% give the metrics of the file with
    those two lines changed."""
    raw = scenario.load(DEMO)
    path = _edited(tmp_path, {f"turbine_per_kw = {raw.capex.turbine_per_kw}": "turbine_per_kw = 1150",
                              f"discount_rate = {raw.finance.discount_rate}": "discount_rate = 0.07"})
    by_file = _json(capsys, "run", path, "--trials", "0")
    by_set = _json(capsys, "run", DEMO, "--trials", "0", "--set", "capex.turbine_per_kw=1150",
                   "--set", "finance.discount_rate=7%")
    assert by_set["metrics"] == by_file["metrics"]
    assert by_set["as_run"] == {"set": {"capex.turbine_per_kw": 1150, "finance.discount_rate": 0.07}}
    assert "as_run" not in by_file


@pytest.mark.parametrize("setting, parts", [
    ("capex.turbin_per_kw=1000", ["capex.turbin_per_kw", "unknown key"]),
    ("capex.turbine_per_kw=-5", ["capex.turbine_per_kw = -5", "must be >= 0"]),
    ("capex.turbine_per_kw", ["--set", "must be KEY=VALUE"]),
    ("wind.mean_speed_mps=5%", ["--set wind.mean_speed_mps", "not one"]),
])
def test_run_set_refused_in_one_line_naming_the_key(capsys, tmp_path, setting, parts):
    book = tmp_path / "out.xlsx"
    _one_line_error(*_cli(capsys, "run", DEMO, "--set", setting, "--workbook", book), *parts)
    assert not book.exists()


def test_run_variant_equals_the_variants_block(capsys):
    base = _json(capsys, "run", DEMO, "--trials", "0")
    name = next(iter(base["variants"]))
    one = _json(capsys, "run", DEMO, "--trials", "0", "--variant", name)
    assert one["metrics"] == base["variants"][name]["metrics"]
    assert one["variants"] == {} and one["as_run"] == {"variant": name}
    _one_line_error(*_cli(capsys, "run", DEMO, "--variant", "no_such"), "--variant = 'no_such'", "unknown variant")


def test_run_seed_is_the_files_seed(capsys):
    a = _json(capsys, "run", DEMO, "--trials", "400", "--seed", "7")
    b = _json(capsys, "run", DEMO, "--trials", "400", "--set", "montecarlo.seed=7")
    c = _json(capsys, "run", DEMO, "--trials", "400")
    assert a["montecarlo"] == b["montecarlo"] and a["montecarlo"]["seed"] == 7
    assert c["montecarlo"]["lcoe_nominal_per_mwh"] != a["montecarlo"]["lcoe_nominal_per_mwh"]
    _one_line_error(*_cli(capsys, "run", DEMO, "--seed", "7", "--set", "montecarlo.seed=8"), "--seed")


# --------------------------------------------------------------------------- output extensions

@pytest.mark.parametrize("argv, name, option", [
    (["run", DEMO, "--trials", "0", "--workbook"], "book.csv", "--workbook"),
    (["run", DEMO, "--trials", "0", "--csv"], "table.xlsx", "--csv"),
    (["portfolio", DEMO_PORTFOLIO, "--trials", "200", "--workers", "0", "--workbook"], "book.csv", "--workbook"),
])
def test_an_output_of_another_format_is_refused_and_nothing_written(capsys, tmp_path, argv, name, option):
    out = tmp_path / name
    _one_line_error(*_cli(capsys, *argv, out), option, "give a name ending in")
    assert list(tmp_path.iterdir()) == []


def test_extensions_in_any_case_are_accepted(capsys, tmp_path):
    rc, _, err = _cli(capsys, "run", DEMO, "--trials", "0", "--brief", "--csv", tmp_path / "TABLE.CSV")
    assert rc == 0, err and (tmp_path / "TABLE.CSV").is_file()


# --------------------------------------------------------------------------- progress

class _Terminal(io.StringIO):
    def isatty(self):
        return True


def test_progress_callbacks_run_from_0_to_1():
    scn = scenario.load(DEMO)
    seen = []
    se.sweep(scn, "project.lifetime_years", [20, 22, 25], breakeven=True, progress=seen.append)
    assert seen == sorted(seen) and seen[-1] == 1.0 and 0 < seen[0]
    seen.clear()
    se.tornado(scn, inputs=["capex.turbine_per_kw", "revenue.ppa_price_per_mwh"], progress=seen.append)
    assert seen == sorted(seen) and seen[-1] == 1.0


def test_a_bar_on_a_terminal_none_under_json_or_a_pipe(monkeypatch, capsys):
    monkeypatch.setattr(progress, "DELAY_S", 0.0)          # shown at once, each move drawn
    monkeypatch.setattr(progress, "REDRAW_S", 0.0)
    out, err = _Terminal(), _Terminal()
    monkeypatch.setattr("sys.stdout", out)
    monkeypatch.setattr("sys.stderr", err)
    assert main(["run", str(DEMO), "--brief", "--trials", "3000"]) == 0
    assert "Monte Carlo" in err.getvalue() and "100%" in err.getvalue()
    assert "Monte Carlo: " not in out.getvalue().replace("Monte Carlo (", "")   # the table has no bar
    for argv in (["run", str(DEMO), "--brief", "--trials", "3000", "--json"],
                 ["sweep", str(DEMO), "--key", "wind.mean_speed_mps", "6", "8", "2", "--json"]):
        err.seek(0), err.truncate()
        assert main(argv) == 0
        assert err.getvalue() == ""
    err.seek(0), err.truncate()
    monkeypatch.setattr("sys.stdout", io.StringIO())                       # piped
    assert main(["tornado", str(DEMO), "--key", "capex.turbine_per_kw"]) == 0
    assert err.getvalue() == ""
    monkeypatch.setattr("sys.stdout", out)
    assert main(["tornado", str(DEMO), "--key", "capex.turbine_per_kw,losses.wake"]) == 0
    assert "tornado on lcoe_nominal_per_mwh" in err.getvalue()
