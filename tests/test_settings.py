"""Settings: defaults, sidecars, schema validation with helpful messages."""

from pathlib import Path

import pytest

from fabric2seis import settings
from fabric2seis.errors import InputError

ROOT = Path(__file__).resolve().parents[1]


def test_packaged_defaults_equal_the_project_config():
    # the package carries a copy for installs outside the project; both must say the same
    assert settings.read_yaml(ROOT / "config" / "config.yaml") == settings.read_yaml(settings.PACKAGED_DEFAULTS)


def test_every_documented_key_is_in_the_schema():
    text = (ROOT / "config" / "README.md").read_text()
    for key in settings.schema()["properties"]:
        assert f"`{key}" in text, key


def test_unknown_key_suggests_the_nearest():
    with pytest.raises(InputError, match="unknown settings key 'averagin'.*did you mean 'averaging'"):
        settings.validate({"averagin": "hill"}, "s.yaml")


def test_wrong_value_names_key_and_valid_choices():
    with pytest.raises(InputError, match="key averaging: 'mean' is not one of"):
        settings.validate({"averaging": "mean"}, "s.yaml")
    with pytest.raises(InputError, match="key grains.threshold_deg"):
        settings.validate({"grains": {"threshold_deg": -1}}, "s.yaml")


def test_sidecar_merges_over_defaults(tmp_path):
    f = tmp_path / "x.ang"
    f.write_text("")
    (tmp_path / "x.yaml").write_text("grains: {min_pixels: 2}\n")
    s, src = settings.settings_for(f)
    assert s["grains"] == {"threshold_deg": 10.0, "min_pixels": 2} and src.endswith("x.yaml")
    assert settings.sidecar_of(tmp_path / "x.ang.gz") == tmp_path / "x.yaml"


def test_bad_yaml_names_line(tmp_path):
    f = tmp_path / "bad.yaml"
    f.write_text("grains:\n  min_pixels: [1,\n")
    with pytest.raises(InputError, match="bad.yaml, line"):
        settings.read_yaml(f)


def test_suite_table_flattens_scalars_and_intervals(tmp_path):
    import json

    from fabric2seis.workflow.suite import suite_table
    f = tmp_path / "summary.json"
    f.write_text(json.dumps({"sample": "a", "n_points": 3, "seismic": {"avp_pct": 5.0, "vp_max_direction": [1, 0, 0]},
                             "uncertainty": {"avp_pct": [4.0, 6.0], "resamples": 200},
                             "phases": {"olivine": {"random_floor": {"J_95": [1.2, 1.9],
                                                                     "pfJ_95": {"[100]": [1.0, 1.1]}}}}}))
    row = suite_table([f]).iloc[0]
    assert row["phases.olivine.random_floor.J_95.high"] == 1.9          # 95 % ranges of random sets too
    assert row["phases.olivine.random_floor.pfJ_95.[100].low"] == 1.0
    assert row["status"] == "ok" and row["seismic.avp_pct"] == 5.0
    assert row["uncertainty.avp_pct.low"] == 4.0 and row["uncertainty.avp_pct.high"] == 6.0
    assert "seismic.vp_max_direction" not in row


def test_values_from_the_command_line_get_the_types_the_schema_wants():
    # Snakemake reads nested --config values with YAML's base loader, as strings (its parse_config)
    from fabric2seis.settings import typed, validate
    given = {"odf": {"halfwidth_deg": "15"}, "bootstrap": {"n": "0", "seed": "3"},
             "clean": {"quality_min": "null", "quality_field": "CI"}, "phases": {"Forsterite": "olivine"}}
    out = typed(given)
    assert out == {"odf": {"halfwidth_deg": 15}, "bootstrap": {"n": 0, "seed": 3},
                   "clean": {"quality_min": None, "quality_field": "CI"}, "phases": {"Forsterite": "olivine"}}
    validate(out)
    with pytest.raises(InputError):
        validate(typed({"odf": {"halfwidth_deg": "wide"}}))    # left for the schema to refuse
