"""Tests for ``tradeopt new SCENARIO.toml``: the commented default scenario as a starting point.

The promises (README, "Usage"): the written file is the embedded default scenario with every key
commented (meaning and unit), named after the file; it loads with the scenario loader as written
(its compression sample file is written beside it); an existing file is never overwritten (one
line on stderr, exit status 2, nothing written).
"""
from __future__ import annotations

import re
import tomllib
from importlib import resources

import pytest

from tradeopt.cli import main
from tradeopt.inputs.scenario import _PAYLOAD_FIELDS, SITE_FIELDS, SCENARIO_SCHEMA, load_scenario

DEFAULT_TEXT = resources.files("tradeopt.data").joinpath("default_scenario.toml").read_text(encoding="utf-8")
SAMPLE = resources.files("tradeopt.data").joinpath("imager_sample.bin").read_bytes()


def run(capsys, *argv):
    rc = main(list(argv))
    out, err = capsys.readouterr()
    return rc, out, err


def check_refused(rc, out, err, *, names):
    assert rc == 2
    assert out == ""
    assert len(err.splitlines()) == 1 and "Traceback" not in err
    assert err.startswith("tradeopt new: ")
    for n in names:
        assert n in err


def test_new_writes_a_scenario_that_loads_and_equals_the_default(tmp_path, capsys):
    # Catches: a template that does not load as written (e.g. its sample file left behind) or
    # that drifted from the embedded default scenario.
    target = tmp_path / "my-mission.toml"
    rc, out, err = run(capsys, "new", str(target))
    assert (rc, err) == (0, "")
    assert str(target) in out and "tradeopt optimize" in out
    assert (tmp_path / "imager_sample.bin").read_bytes() == SAMPLE
    sc = load_scenario(target)
    assert sc.name == "my-mission"  # named after the file, so its results folder is its own
    assert len(sc.sites) == 3 and sc.band_ids == ["S-DOWN", "X-DOWN", "KA-DOWN"]
    written = tomllib.loads(target.read_text(encoding="utf-8"))
    default = tomllib.loads(DEFAULT_TEXT)
    default["scenario"]["name"] = "my-mission"
    assert written == default


def test_written_scenario_runs_through_the_demand_command(tmp_path, capsys):
    # Catches: a sample-file path that resolves only beside the embedded copy (the demand
    # steps read the sample relative to the written file).
    target = tmp_path / "demo.toml"
    assert run(capsys, "new", str(target))[0] == 0
    rc, out, err = run(capsys, "demand", str(target))
    assert (rc, err) == (0, "")
    assert "source coding: imager" in out


def test_every_key_line_has_a_comment_with_a_unit_in_brackets(tmp_path, capsys):
    # Catches: a key added to the template without saying what it means and in what unit.
    target = tmp_path / "s.toml"
    assert run(capsys, "new", str(target))[0] == 0
    keys = 0
    for line in target.read_text(encoding="utf-8").splitlines():
        if line.startswith("#") or not re.match(r'\s*("?[A-Za-z_-]+"?)\s*=', line):
            continue
        keys += 1
        assert "#" in line.split("=", 1)[1], line
        assert re.search(r"#.*\[[^\]]+\]", line), line
    assert keys >= 50


def test_every_scenario_key_is_mentioned(tmp_path, capsys):
    # Catches: an optional key of the scenario schema the starting point never mentions, so a
    # user cannot discover it from the written file.
    target = tmp_path / "s.toml"
    assert run(capsys, "new", str(target))[0] == 0
    text = target.read_text(encoding="utf-8")
    names = [f.name for fields in SCENARIO_SCHEMA.values() for f in fields]
    names += [f.name for f in SITE_FIELDS] + [f.name for f in _PAYLOAD_FIELDS]
    missing = [n for n in names if not re.search(rf"\b{n}\b", text)]
    assert missing == []
    for table in SCENARIO_SCHEMA:
        assert f"[{table}]" in text, table


def test_new_refuses_to_overwrite_an_existing_file(tmp_path, capsys):
    # Catches: a starting point written over the user's own scenario.
    target = tmp_path / "mine.toml"
    target.write_text("# my own work\n")
    rc, out, err = run(capsys, "new", str(target))
    check_refused(rc, out, err, names=[str(target), "refusing to overwrite"])
    assert target.read_text() == "# my own work\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["mine.toml"]  # no sample written either


def test_new_refuses_a_different_sample_file_and_writes_nothing(tmp_path, capsys):
    # Catches: the user's own imager_sample.bin replaced by the demo sample.
    (tmp_path / "imager_sample.bin").write_bytes(b"user data")
    rc, out, err = run(capsys, "new", str(tmp_path / "s.toml"))
    check_refused(rc, out, err, names=["imager_sample.bin", "refusing to overwrite"])
    assert (tmp_path / "imager_sample.bin").read_bytes() == b"user data"
    assert not (tmp_path / "s.toml").exists()


def test_second_scenario_in_the_same_folder_reuses_the_identical_sample(tmp_path, capsys):
    # Catches: a refusal when the sample beside the file is the very one the command would write.
    assert run(capsys, "new", str(tmp_path / "a.toml"))[0] == 0
    rc, out, err = run(capsys, "new", str(tmp_path / "b.toml"))
    assert (rc, err) == (0, "")
    assert load_scenario(tmp_path / "b.toml").name == "b"


@pytest.mark.parametrize("name, expect", [("s.txt", "ending in .toml"), ("no/such/dir/s.toml", "does not exist")])
def test_new_bad_target_is_one_line(name, expect, tmp_path, capsys):
    # Catches: a traceback (or a stray file) for a wrong suffix or a missing folder.
    rc, out, err = run(capsys, "new", str(tmp_path / name))
    check_refused(rc, out, err, names=[expect])
    assert list(tmp_path.iterdir()) == []
