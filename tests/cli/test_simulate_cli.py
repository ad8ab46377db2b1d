"""``tradeopt simulate`` on the command line: one-line errors with nothing written, the --json object,
and byte-identical folders for the same seed."""
from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from tradeopt.cli import main

_SCRIPT = Path(sys.executable).with_name("tradeopt")
CLI = [str(_SCRIPT)] if _SCRIPT.exists() else [sys.executable, "-m", "tradeopt.cli"]
GEO = str(Path(__file__).resolve().parents[2] / "examples" / "geostationary_link.toml")


def _run(args, **kw):
    return subprocess.run(CLI + args, capture_output=True, text=True, timeout=300, **kw)


@pytest.mark.parametrize("args, expected", [
    (["--years", "0"], "option --years"),
    (["--band", "Q-DOWN"], "unknown band 'Q-DOWN'"),
    (["--step-s", "7"], "divides an hour"),
    (["--workers", "0"], "option --workers"),
    (["--workers", "2", "--scheduler", "tcp://127.0.0.1:1"], "not allowed with argument"),
])
def test_bad_options_are_one_line_with_nothing_written(tmp_path, capsys, args, expected):
    # Catches: a traceback or a half-written folder on a bad option (errors are for people).
    out = tmp_path / "sim"
    with pytest.raises(SystemExit) if "not allowed" in expected else _nothing():
        code = main(["simulate", GEO, "--out", str(out), *args])
        assert code == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and expected in err
    assert not out.exists()


class _nothing:
    def __enter__(self):
        return self

    def __exit__(self, *exc):
        return False


def test_unreachable_scheduler_is_one_line_and_exit_2(tmp_path, capsys, monkeypatch):
    # Catches: a hang or a traceback when the cluster address is wrong (bounded by the connect timeout,
    # shortened here from its 10 s).
    import tradeopt.study.cluster as cluster

    monkeypatch.setattr(cluster, "SCHEDULER_TIMEOUT_S", 1.0)
    out = tmp_path / "sim"
    assert main(["simulate", GEO, "--step-s", "60", "--scheduler", "tcp://127.0.0.1:9", "--out", str(out)]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "cannot reach the dask scheduler within 1 s" in err
    assert not out.exists()


@pytest.mark.slow
def test_json_and_byte_identical_folders(tmp_path):
    # Catches: unseeded weather or time stamps in the outputs (same inputs and seed, same bytes), and a
    # --json object without the documented keys.
    a, b = tmp_path / "a", tmp_path / "b"
    r = _run(["simulate", GEO, "--step-s", "60", "--seed", "11", "--out", str(a), "--json"])
    assert r.returncode == 0, r.stderr
    rec = json.loads(r.stdout)
    assert rec["years"] == 1 and rec["seed"] == 11 and rec["band_id"] == "X-DOWN"
    assert {"sites", "daily", "storage", "diversity"} <= rec.keys()
    r = _run(["simulate", GEO, "--step-s", "60", "--seed", "11", "--out", str(b), "--quiet"])
    assert r.returncode == 0, r.stderr
    assert "achieved" in r.stdout and "site diversity" not in r.stdout  # one site: no pair
    names = sorted(p.name for p in a.iterdir())
    assert {"simulation.json", "daily.csv", "sites.csv", "attenuation_exceedance.csv", "diversity.csv",
            "storage_fill.png", "daily_volume.png", "margin_day.png", "attenuation_exceedance.png"} <= set(names)
    for name in names:  # summary.txt names its own folder
        assert (a / name).read_bytes().replace(str(a).encode(), b"DIR") == \
            (b / name).read_bytes().replace(str(b).encode(), b"DIR"), name
