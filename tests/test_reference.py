"""The key reference (``lcoe keys``) and the new-site template (``lcoe new``) against the schema.

The schema (lcoe/inputs/schema.py) is what every file is checked against: the reference and the
template must list every one of its keys, and say of each what the schema does (required or its
default, the allowed values, the range), so that the documentation cannot drift from the rules.
The ranges are checked by loading values just outside them (the loader must refuse each), the
template by running it as written.
"""

from __future__ import annotations

import json
import math
import re
import tomllib
import typing

import pytest
from pydantic import BaseModel

from lcoe.cli import main
from lcoe.engine import run
from lcoe.inputs import reference as ref
from lcoe.inputs import scenario as sc
from lcoe.inputs.errors import ScenarioError
from lcoe.inputs.plausibility import plausibility_warnings
from lcoe.inputs.schema import ScenarioFields
from lcoe.physics import turbine
from tests.conftest import ROOT


def _schema_keys() -> dict[str, object]:
    """Every leaf key of the schema (items of arrays and named tables without their names) and its
    pydantic field, found here by walking the models independently of the reference."""
    out = {}

    def inner(ann):
        if isinstance(ann, type) and issubclass(ann, BaseModel):
            return ann
        for a in typing.get_args(ann):
            found = inner(a)
            if found is not None:
                return found
        return None

    def visit(model, prefix):
        for name, info in model.model_fields.items():
            sub = inner(info.annotation)
            if sub is not None:
                visit(sub, f"{prefix}{name}.")
            else:
                out[f"{prefix}{name}"] = info
    visit(ScenarioFields, "")
    out.pop("variants")
    out.pop("lender_cases")
    return out


def _all_entries():
    return {e.key: e for rows in ref.entries().values() for e in rows}


def test_the_reference_lists_every_key_of_the_schema_and_no_other():
    keys = set(_all_entries()) - {ref.VARIANT_KEY, ref.LENDER_KEY}
    assert keys == set(_schema_keys())


def test_defaults_and_required_keys_are_those_of_the_schema():
    entries = _all_entries()
    for key, info in _schema_keys().items():
        e = entries[key]
        if info.is_required():
            assert e.default == "required", key
        elif info.default not in (None, [], {}):
            v = info.default
            shown = f'"{v}"' if isinstance(v, str) else (f"{v:g}" if isinstance(v, float) else str(v))
            assert e.default == shown, key
        else:
            assert e.default != "required", key


def test_the_non_zero_defaults_are_stated():
    """The defaults a user cannot guess (issue: written nowhere before) are in the reference."""
    text = ref.reference_text()
    for line in ("target_dscr [x]: number; 1 <= x <= 5; default 1.3.",
                 "max_gearing [fraction]: number; 0 <= x <= 1; default 0.75.",
                 'currency [text]: text; default "EUR".', 'sizing_case [-]: one of p50 | p90_1yr | p90_10yr | '
                 'p99_1yr; default "p90_1yr".', "curve_air_density_kgm3 [kg/m3]: number; 0.5 <= x <= 1.6; "
                 "default 1.225."):
        assert line in text.replace("\n      ", " "), line


def test_allowed_values_are_every_choice_of_the_schema():
    entries = _all_entries()
    for key, info in _schema_keys().items():
        choices = [a for a in (info.annotation, *typing.get_args(info.annotation))
                   if typing.get_origin(a) is typing.Literal]
        if choices:
            assert entries[key].kind == "one of " + " | ".join(typing.get_args(choices[0])), key


def _template_raw() -> dict:
    return tomllib.loads(ref.template_text("site_curve.csv"))


def _set(raw: dict, key: str, value) -> None:
    parts = key.split(".")
    node = raw
    for p in parts[:-1]:
        node = node[p]
        if isinstance(node, list):
            node = node[0]
    node[parts[-1]] = value


def _outside(entry) -> list[float]:
    """Values just beyond each end of the range the reference states (read from its words): the
    next whole number for a whole-number key, a hair beyond a closed end, the end itself if open."""
    m = re.fullmatch(r"(?:(-?[\d,.e]+) (<=?) )?x(?: (<=?|>=?) (-?[\d,.e]+))?", entry.allowed)
    assert m, entry.allowed
    lo, lo_op, op, hi = m.groups()
    if op in (">", ">="):          # "x > lo" alone
        lo, lo_op, op, hi = hi, "<" if op == ">" else "<=", None, None
    step = (lambda b: 1.0) if entry.kind == "whole number" else (lambda b: max(1e-6, 1e-9 * abs(b)))
    out = []
    for bound, strict, sign in ((lo, lo_op == "<", -1), (hi, op == "<", +1)):
        if bound is not None:
            b = float(bound.replace(",", ""))
            out.append(b if strict else b + sign * step(b))
    return [int(v) for v in out] if entry.kind == "whole number" else out


def test_each_stated_range_is_the_range_the_loader_enforces(tmp_path):
    """A value just outside the range the reference gives is refused, naming the key (the loader is
    the judge: a reference that claimed a wider or narrower range would fail here)."""
    raw = _template_raw()
    tried = 0
    entries = _all_entries()
    for key in ref.template_keys():
        e = entries[key]
        if e.kind not in ("number", "whole number") or not e.allowed:
            continue
        for value in _outside(e):
            bad = json.loads(json.dumps(raw))
            _set(bad, key, value)
            with pytest.raises(ScenarioError) as err:
                sc.from_dict(bad, source="site.toml", base_dir=tmp_path)
            assert key.split(".")[-1] in str(err.value), (key, value, str(err.value))
            tried += 1
    assert tried > 60


def test_the_template_carries_the_reference_word_for_word():
    """Each key of the template sits under the same lines `lcoe keys` prints for it."""
    lines = ref.template_text("site_curve.csv").splitlines()
    for key, e in _all_entries().items():
        words = ["# " + x for x in e.lines()]
        starts = [i for i in range(len(lines)) if lines[i:i + len(words)] == words]
        assert starts, key
        after = lines[starts[0] + len(words)]
        assert after.lstrip("# ").startswith(e.name if key not in (ref.VARIANT_KEY, ref.LENDER_KEY) else '"'), \
            (key, after)
    reference = ref.reference_text()
    for e in _all_entries().values():
        assert "\n".join("  " + x for x in e.lines()) in reference


def test_the_template_runs_as_written_and_is_ordinary(tmp_path):
    path = tmp_path / "site.toml"
    path.write_text(ref.template_text("site_curve.csv"))
    (tmp_path / "site_curve.csv").write_text(ref.curve_template_csv())
    scn = sc.load(path)
    assert plausibility_warnings(scn) == []
    for name in scn.variants:
        assert plausibility_warnings(scn.variant(name)) == []
    case = run(scn)
    assert case.metrics["lcoe_nominal_per_mwh"] > 0
    # the keys it gives, and only those, are set in the file (the rest are commented out)
    given = {k for k in ref.template_keys()}
    assert "wind.mean_speed_mps" in given and "wind.weibull_scale_mps" not in given
    assert scn.wind.rose is None and scn.layout is None and scn.finance.debt is not None
    assert scn.wind.mean_temperature_c is None   # the standard atmosphere at the elevation


@pytest.mark.parametrize("switch", ["wind.mean_temperature_c", "wind.air_density_kgm3", "wind.rose",
                                    "montecarlo.vary", "turbine.cp_max"])
def test_a_commented_alternative_is_valid_once_uncommented(tmp_path, switch):
    """The commented-out values are valid too: uncomment one (with what it replaces taken out)."""
    lines = ref.template_text("site_curve.csv").splitlines()
    if switch in ref.SECTIONS:      # a commented table: its header and its valued keys, up to the next rule
        start = next(i for i, x in enumerate(lines) if x.startswith(f"# [{switch}") and "  (" not in x)
        end = next(i for i in range(start, len(lines)) if lines[i].startswith("# ---"))
        span = range(start, end)
    else:
        name = switch.rpartition(".")[2]
        span = [i for i, x in enumerate(lines) if x.startswith(f"# {name} = ")]
        assert len(span) == 1
    out = [x[2:] if i in span and re.match(r"# (\[|[a-z0-9_]+ = )", x) else x for i, x in enumerate(lines)]
    raw = tomllib.loads("\n".join(out))
    node = raw
    for part in switch.split("."):
        assert part in node, switch            # the switch is really set now
        node = node[part]
    if switch == "wind.rose":
        del raw["wind"]["mean_speed_mps"], raw["wind"]["weibull_shape"]
    if switch == "turbine.cp_max":
        del raw["turbine"]["power_curve"]
    if switch == "montecarlo.vary":
        assert raw["montecarlo"]["vary"]["capex.turbine_per_kw"]["distribution"] == "triangular"
    (tmp_path / "site_curve.csv").write_text(ref.curve_template_csv())
    scn = sc.from_dict(raw, source="site.toml", base_dir=tmp_path)
    assert run(scn, breakeven=False).metrics["lcoe_nominal_per_mwh"] > 0


def test_the_curve_template_is_a_valid_table_of_the_stated_physics(tmp_path):
    """The invented curve: 0.5 rho A v^3 x 0.44 x 0.94 below rated (worked by hand at 8 m/s:
    0.5 x 1.225 x pi x 65^2 x 512 x 0.4136 / 1000 = 1,722 kW), capped at 4,000 kW; zero below 3 m/s."""
    path = tmp_path / "c.csv"
    path.write_text(ref.curve_template_csv())
    curve = turbine.read_curve_csv(path, 4000.0, 130.0)   # the loader's checks: sorted, Betz, peak at rated
    rows = [r.split(",") for r in ref.curve_template_csv().splitlines()[1:]]
    table = {float(v): (float(p), float(c)) for v, p, c in rows}
    assert table[8.0][0] == pytest.approx(0.5 * 1.225 * math.pi * 65 ** 2 * 512 * 0.44 * 0.94 / 1000, abs=0.5)
    assert table[8.0][0] == pytest.approx(1722, abs=1)
    assert max(p for p, _ in table.values()) == 4000.0 and table[2.5][0] == 0.0 and table[25.0][0] == 4000.0
    assert all(0.0 <= c <= 1.0 for _, c in table.values())
    assert curve.rated_power_kw == 4000.0 and curve.ct is not None


def test_lcoe_new_writes_both_files_and_they_check_and_run(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    assert main(["new", "mysite.toml"]) == 0
    assert (tmp_path / "mysite.toml").is_file() and (tmp_path / "mysite_curve.csv").is_file()
    assert 'power_curve = "mysite_curve.csv"' in (tmp_path / "mysite.toml").read_text()
    capsys.readouterr()
    assert main(["check", "mysite.toml"]) == 0
    assert "mysite.toml: ok" in capsys.readouterr().out
    assert main(["run", "mysite.toml", "--json", "--trials", "0"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["metrics"]["lcoe_nominal_per_mwh"] > 0


def test_lcoe_new_never_replaces_and_refuses_a_wrong_name(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "taken_curve.csv").write_text("mine\n")
    assert main(["new", "taken.toml"]) == 2
    assert "taken_curve.csv" in capsys.readouterr().err and not (tmp_path / "taken.toml").exists()
    assert (tmp_path / "taken_curve.csv").read_text() == "mine\n"
    (tmp_path / "site.toml").write_text("mine\n")
    assert main(["new", "site.toml"]) == 2
    assert "already exists" in capsys.readouterr().err
    assert (tmp_path / "site.toml").read_text() == "mine\n" and not (tmp_path / "site_curve.csv").exists()
    assert main(["new", "site.txt"]) == 2
    assert "give a name ending in .toml" in capsys.readouterr().err
    assert main(["new", "nowhere/site.toml"]) == 2
    assert "folder does not exist" in capsys.readouterr().err


def test_lcoe_keys_prints_the_reference_whole_by_section_or_by_key(capsys):
    assert main(["keys"]) == 0
    assert capsys.readouterr().out == ref.reference_text()
    assert main(["keys", "finance"]) == 0
    out = capsys.readouterr().out
    assert "[finance]" in out and "[finance.debt]" in out and "[project]" not in out
    assert "declining_balance" in out and "p90_10yr" in out
    assert main(["keys", "finance.debt.sizing_case"]) == 0
    out = capsys.readouterr().out
    assert "sizing_case" in out and "target_dscr" not in out
    assert main(["keys", "finanse"]) == 2
    assert "no such section (did you mean 'finance'?)" in capsys.readouterr().err


def test_the_readme_documents_the_files_and_choices():
    """The README names the CSV columns, every allowed value of sizing_case and depreciation, and
    the two new commands."""
    text = (ROOT / "README.md").read_text()
    for word in ("lcoe new", "lcoe keys", "speed_mps,power_kw", "timestamp,speed_mps", "x_m,y_m",
                 *typing.get_args(ScenarioFields.model_fields["finance"].annotation.model_fields["depreciation"]
                                  .annotation)):
        assert word in text, word
    from lcoe.inputs.schema import SIZING_CASES
    for case in SIZING_CASES:
        assert f"`{case}`" in text, case


def test_reference_and_template_fit_100_columns():
    for text in (ref.reference_text(), ref.template_text("a_rather_long_site_name_curve.csv")):
        for line in text.splitlines():
            assert len(line) <= 100, line
