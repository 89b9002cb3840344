"""lcoe.outputs.bundle: the self-contained zip of a scenario and its data files, the file's comments kept.

The reference is `lcoe check` (the command a user runs on the unpacked bundle), the TOML 1.0
reader of the standard library (the edited text must read back as exactly the scenario), and the
engine's figures of the same inputs.
"""

from __future__ import annotations

import io
import tomllib
import zipfile

import pytest
from conftest import DEMO, DEMO_HOURLY, DEMO_LAYOUT

from lcoe import cli
from lcoe import engine as model
from lcoe.analysis import lifetime
from lcoe.inputs import scenario as sc
from lcoe.outputs import bundle

FILE = '''# a site (comment at the top)
schema_version = 1

[project]
name = "Site # one"   # a hash inside a string is not a comment
lifetime_years = 25        # the operating life

[[maintenance.overhaul]]
name = "blades"
year = 12    # mid-life
cost_per_turbine = 1.0

[[maintenance.overhaul]]
name = "late works"
year = 22
cost_per_turbine = 2.0

[finance.debt]
tenor_years = 16  # years
'''


def _unpack(files: dict, where) -> dict:
    for name, data in files.items():
        (where / name).parent.mkdir(parents=True, exist_ok=True)
        (where / name).write_bytes(data)
    return files


def test_edit_text_changes_values_in_place_and_keeps_every_comment():
    raw = tomllib.loads(FILE)
    raw["project"]["lifetime_years"] = 20
    raw["maintenance"]["overhaul"] = [raw["maintenance"]["overhaul"][0]]      # the late works left out
    raw["finance"]["debt"]["tenor_years"] = 15
    raw["finance"]["debt"]["interest_rate"] = 0.05                           # a key the file did not have
    out = bundle.edit_text(FILE, raw)
    assert out is not None
    assert tomllib.loads(out) == raw
    assert "lifetime_years = 20  # the operating life" in out
    assert "tenor_years = 15  # years" in out
    assert "year = 12    # mid-life" in out and "late works" not in out
    assert "# a site (comment at the top)" in out and "# a hash inside a string is not a comment" in out


def test_edit_text_appends_an_item_and_says_none_for_a_moved_one():
    raw = tomllib.loads(FILE)
    raw["maintenance"]["overhaul"].append({"name": "new", "year": 5, "cost_per_turbine": 3.0})
    out = bundle.edit_text(FILE, raw)
    assert out is not None and tomllib.loads(out) == raw and "year = 12    # mid-life" in out
    raw = tomllib.loads(FILE)
    raw["maintenance"]["overhaul"].reverse()
    assert bundle.edit_text(FILE, raw) is None


def test_a_bundle_leaves_out_what_lcoe_check_would_refuse_for_the_inputs_and_says_so(tmp_path, capsys):
    """Life 12 (from 25): the PPA of 15 years, cut to 12, covers the whole life, so the merchant
    price's draws change nothing (the engine's rule, montecarlo.refuse_idle_inputs): that input is
    left out with its reason, and the bundle passes `lcoe check` with the same figures."""
    scn = sc.load(DEMO)
    over, _ = lifetime.life_overrides(scn, 12)
    changed = scn.with_overrides(over)
    files = _unpack(bundle.bundle_files(changed, DEMO.read_text(encoding="utf-8"), "short"), tmp_path)
    assert cli.main(["check", str(tmp_path / "short" / "short.toml")]) == 0, capsys.readouterr().err
    text = files["short/short.toml"].decode()
    assert "# Left out: montecarlo.vary.revenue.merchant_price_per_mwh, these inputs do not use it" in text
    raw = tomllib.loads(text)
    assert "revenue.merchant_price_per_mwh" not in raw["montecarlo"]["vary"]
    assert model.run(sc.load(tmp_path / "short" / "short.toml")).metrics == model.run(changed).metrics


def test_a_loaded_variant_bundles_with_the_variants_that_still_fit(tmp_path, capsys):
    """The 30-year variant adds an extension overhaul in year 25: the file's 20-year variant no longer
    fits it and is left out, said in the file; the added overhaul is appended, the comments kept."""
    var = sc.load(DEMO).variant("life_30_extension")
    files = _unpack(bundle.bundle_files(var, DEMO.read_text(encoding="utf-8"), "v"), tmp_path)
    assert cli.main(["check", str(tmp_path / "v" / "v.toml")]) == 0, capsys.readouterr().err
    text = files["v/v.toml"].decode()
    assert "# Left out: variant life_20, it does not fit these inputs" in text
    assert "could not be kept" not in text
    assert model.run(sc.load(tmp_path / "v" / "v.toml")).metrics == model.run(var).metrics


@pytest.mark.parametrize("path", [DEMO, DEMO_HOURLY, DEMO_LAYOUT], ids=["weibull", "hourly", "layout"])
def test_a_bundle_passes_lcoe_check_anywhere_and_gives_the_same_figures(path, tmp_path, capsys):
    scn = sc.load(path)
    works = {f"maintenance.overhaul.{o.name}.year": 18 for o in scn.maintenance.overhaul}
    scn = scn.with_overrides(works)
    over, notes = lifetime.life_overrides(scn, 16)      # the overhauls in year 18 leave
    assert len(notes) == len(works)
    changed = scn.with_overrides({**over, "maintenance.fixed_per_kw_year": 39.25})
    data = bundle.bundle_zip(changed, path.read_text(encoding="utf-8"), "my site")
    where = tmp_path / "deep" / "elsewhere"
    with zipfile.ZipFile(io.BytesIO(data)) as z:
        z.extractall(where)
        names = z.namelist()
    assert names[0] == "my_site/my_site.toml"
    assert all(n.startswith("my_site/data/") for n in names[1:])
    unpacked = where / "my_site" / "my_site.toml"
    assert cli.main(["check", str(unpacked)]) == 0, capsys.readouterr().err
    text = unpacked.read_text(encoding="utf-8")
    assert path.read_text(encoding="utf-8").splitlines()[0] in text        # the file's first comment
    assert "could not be kept" not in text
    assert model.run(sc.load(unpacked)).metrics == model.run(changed).metrics


def test_a_bundle_without_the_files_text_is_written_afresh_and_still_checks(tmp_path, capsys):
    scn = sc.load(DEMO)
    files = bundle.bundle_files(scn, None, "x")
    (tmp_path / "x" / "data").mkdir(parents=True)
    for name, data in files.items():
        (tmp_path / name).write_bytes(data)
    assert cli.main(["check", str(tmp_path / "x" / "x.toml")]) == 0, capsys.readouterr().err
    assert tomllib.loads(files["x/x.toml"].decode())["turbine"]["power_curve"] == "data/tallowmere_curve.csv"
