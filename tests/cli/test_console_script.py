"""The installed ``tradeopt`` script ends the process at once after the command (``cli.console_main``).

It skips Python's teardown, so it must flush what the command printed and pass on the exit status;
these run the script in a subprocess with block-buffered output (no PYTHONUNBUFFERED), as a pipe
into another program sees it.
"""
import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

_SCRIPT = Path(sys.executable).with_name("tradeopt")
EXAMPLE = Path(__file__).resolve().parents[2] / "tradeopt" / "data" / "examples" / "x_band_leo_downlink.toml"

pytestmark = pytest.mark.skipif(not _SCRIPT.exists(), reason="the console script is not installed")


def _run(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    env = {k: v for k, v in os.environ.items() if k != "PYTHONUNBUFFERED"}
    return subprocess.run([str(_SCRIPT), *args], cwd=cwd, env=env, capture_output=True, text=True, timeout=300)


def test_piped_output_is_complete(tmp_path):
    # Catches: an exit that drops the block-buffered output still in the stream (the JSON would be
    # cut off or empty in a pipe).
    proc = _run("budget", str(EXAMPLE), "--json", cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    record = json.loads(proc.stdout)
    assert record["ebn0_db"] > record["ebn0_required_db"]  # the example closes


def test_exit_status_is_passed_on(tmp_path):
    # Catches: an exit that always reports success (0), so that scripts cannot tell a refused input.
    proc = _run("budget", str(tmp_path / "no-such-link.toml"), cwd=tmp_path)
    assert proc.returncode == 2
    assert proc.stderr.startswith("tradeopt budget: ") and "Traceback" not in proc.stderr
