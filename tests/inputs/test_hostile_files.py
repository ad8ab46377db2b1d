"""Input files that used to hang, exhaust memory or end in a traceback.

A named pipe (FIFO) in a catalog folder hung forever; a catalog that is ``/dev/zero`` grew to
gigabytes before it was killed; a 2 GB sparse compression sample took minutes (lzma over the
whole file); a TOML integer beyond 64 bits, or beyond a float, ended in a traceback. Each is now
one line with exit status 2, or a bounded, documented result.
"""
from __future__ import annotations

import contextlib
import os
import shutil
import signal
import subprocess
import sys
from pathlib import Path

import pytest

from tradeopt.cli import main
from tradeopt.inputs import catalog as catalog_module
from tradeopt.inputs.catalog import CATALOG_MAX_BYTES, load_catalog, read_catalog_csv
from tradeopt.inputs.errors import InputError
from tradeopt.inputs.schema import INT64_MAX, TOML_MAX_BYTES, Field, convert, read_input_bytes
from tradeopt.mission import demand as dm

ROOT = Path(__file__).resolve().parents[2]
BUNDLED_CATALOGS = ROOT / "catalogs"

needs_fifo = pytest.mark.skipif(not hasattr(os, "mkfifo") or not hasattr(signal, "SIGALRM"),
                                reason="named pipes and SIGALRM are POSIX-only")
needs_dev_zero = pytest.mark.skipif(not os.path.exists("/dev/zero") or not hasattr(os, "symlink")
                                    or sys.platform == "win32", reason="/dev/zero and symbolic links are POSIX-only")

SCENARIO_TOML = """\
[scenario]
name = "tern-hostile"
availability_percent = 99.0
required_margin_db = 3.0
bands = ["X-DOWN"]
{catalogs}
[orbit]
range_m = 2.0e6

[requirement]
rate_bps = 20e6
{extra}
[[sites]]
id = "saltmarsh"
latitude_deg = 40.0
longitude_deg = -4.0
altitude_m = 700.0
min_elevation_deg = 10.0
"""


class Hung(BaseException):
    """Raised by the alarm: not an OSError, so no handler in tradeopt can turn it into a message."""


@contextlib.contextmanager
def deadline(seconds: int = 5):
    """Fail instead of hanging: SIGALRM interrupts a blocked open() or read()."""
    def fire(signum, frame):
        raise Hung(f"still blocked after {seconds} s")

    previous = signal.signal(signal.SIGALRM, fire)
    signal.alarm(seconds)
    try:
        yield
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, previous)


def run(capsys, *argv: str) -> tuple[int, str, str]:
    capsys.readouterr()
    rc = main(list(argv))
    out, err = capsys.readouterr()
    return rc, out, err


def one_line(rc: int, out: str, err: str, *texts: str) -> str:
    assert rc == 2, err
    assert out == "" and "Traceback" not in err
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    for text in texts:
        assert text in lines[0], lines[0]
    return lines[0]


def catalog_copy(tmp_path: Path) -> Path:
    cats = tmp_path / "cats"
    shutil.copytree(BUNDLED_CATALOGS, cats)
    return cats


def sparse_file(path: Path, size: int, *, tail: bytes = b"") -> Path:
    """A file of ``size`` bytes that takes no disk space (zeros), optionally ending in ``tail``."""
    with open(path, "wb") as fh:
        fh.truncate(size - len(tail))
        fh.seek(size - len(tail))
        fh.write(tail)
    return path


# --------------------------------------------------------------------------- catalogs

@needs_fifo
def test_fifo_in_a_catalog_folder_is_refused_without_blocking(tmp_path, capsys):
    # Bug: open() of a named pipe waited forever for a writer (`tradeopt catalog check` hung).
    cats = catalog_copy(tmp_path)
    (cats / "modcods.csv").unlink()
    os.mkfifo(cats / "modcods.csv")
    with deadline():
        rc, out, err = run(capsys, "catalog", "check", "--catalogs", str(cats))
    one_line(rc, out, err, str(cats / "modcods.csv"), "named pipe (FIFO)", "not a regular file")


@needs_dev_zero
def test_dev_zero_as_a_catalog_is_refused_in_a_bounded_process(tmp_path):
    # Bug: a catalog linked to /dev/zero was read to the end, growing to 9.5 GB before it was killed.
    # A real process with a 1 GiB address-space limit: were the bug back it would fail fast, not swap.
    cats = catalog_copy(tmp_path)
    (cats / "bands.csv").unlink()
    (cats / "bands.csv").symlink_to("/dev/zero")

    def limit_memory():  # pragma: no cover (runs in the child)
        import resource
        resource.setrlimit(resource.RLIMIT_AS, (1 << 30, 1 << 30))

    proc = subprocess.run([sys.executable, "-m", "tradeopt.cli", "catalog", "check", "--catalogs", str(cats)],
                          capture_output=True, text=True, timeout=60, preexec_fn=limit_memory, cwd=ROOT)
    assert proc.returncode == 2, proc.stderr
    assert proc.stdout == "" and "Traceback" not in proc.stderr
    assert proc.stderr.strip().splitlines() == [
        f"tradeopt catalog: {cats / 'bands.csv'}: is a character device, not a regular file; "
        "expected a CSV catalog file"]


def test_oversized_catalog_is_refused_before_reading(tmp_path, capsys):
    # Bug: a catalog CSV of any size was read whole into memory (no stated limit).
    cats = catalog_copy(tmp_path)
    sparse_file(cats / "amplifiers.csv", CATALOG_MAX_BYTES + 1)
    rc, out, err = run(capsys, "catalog", "check", "--catalogs", str(cats))
    one_line(rc, out, err, str(cats / "amplifiers.csv"), "larger than the 16.0 MiB limit")


def test_catalog_limit_is_sixteen_mib_and_a_file_at_the_limit_is_read(tmp_path, monkeypatch):
    # Bug: an off-by-one refusing a file exactly at the limit (the limit itself is documented in README).
    assert CATALOG_MAX_BYTES == 16 * 1024 * 1024
    cats = catalog_copy(tmp_path)
    limit = max(p.stat().st_size for p in cats.glob("*.csv")) + 10
    monkeypatch.setattr(catalog_module, "CATALOG_MAX_BYTES", limit)
    bands = cats / "bands.csv"
    text = bands.read_bytes()
    bands.write_bytes(text + b"\n" * (limit - len(text)))  # blank lines are skipped by the reader
    assert bands.stat().st_size == limit
    assert len(load_catalog(cats).bands) > 0
    bands.write_bytes(text + b"\n" * (limit + 1 - len(text)))
    with pytest.raises(InputError, match=rf"bands.csv: is {limit + 1} bytes, larger than the {limit} bytes limit"):
        load_catalog(cats)


def test_folder_named_like_a_catalog_file_is_refused(tmp_path):
    # Bug: a folder in place of a CSV gave "cannot be read (IsADirectoryError)", not what to fix.
    cats = catalog_copy(tmp_path)
    (cats / "pfd_limits.csv").unlink()
    (cats / "pfd_limits.csv").mkdir()
    with pytest.raises(InputError, match=r"pfd_limits.csv: is a folder, not a regular file"):
        load_catalog(cats)


def test_crlf_catalog_reads_as_before(tmp_path):
    # Bug: reading bytes instead of text would keep "\r\n" inside a quoted two-line cell of a CRLF file
    # (a text-mode read, as before, gives "\n"); line numbers must not change either.
    path = tmp_path / "amplifiers.csv"
    path.write_bytes(b"amplifier_id,band,kind,rf_power_w,dc_to_rf_efficiency,mass_kg,note\r\n"
                     b'X-A,X,SSPA,2,0.3,0.5,"line one\r\nline two"\r\n'
                     b"X-B,X,SSPA,4,0.3,0.7,plain\r\n")
    table = read_catalog_csv(path, "amplifiers")
    assert list(table["note"]) == ["line one\nline two", "plain"]
    assert list(table["line"]) == [2, 4]


# --------------------------------------------------------------------------- scenario and link files

@needs_fifo
@pytest.mark.parametrize("command", ["budget", "optimize", "demand", "contacts"])
def test_fifo_as_scenario_or_link_file(tmp_path, capsys, command):
    # Bug: a named pipe as the input file blocked every command forever.
    fifo = tmp_path / "input.toml"
    os.mkfifo(fifo)
    argv = [command, str(fifo)] + (["--out", str(tmp_path / "out")] if command == "optimize" else [])
    with deadline():
        rc, out, err = run(capsys, *argv)
    one_line(rc, out, err, str(fifo), "named pipe (FIFO)")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["input.toml"]


def test_oversized_toml_is_refused(tmp_path, capsys):
    # Bug: a scenario or link file of any size was read whole (no stated limit).
    big = sparse_file(tmp_path / "big.toml", TOML_MAX_BYTES + 1)
    for command in ("budget", "demand"):
        rc, out, err = run(capsys, command, str(big))
        one_line(rc, out, err, str(big), "larger than the 4.0 MiB limit")


@needs_fifo
def test_read_input_bytes_refuses_without_opening_for_a_blocking_read(tmp_path):
    # Bug: the check must happen before a blocking open; a FIFO with no writer is the test.
    fifo = tmp_path / "pipe"
    os.mkfifo(fifo)
    with deadline(), pytest.raises(InputError, match="named pipe"):
        read_input_bytes(fifo, limit_bytes=100, what="a test file")
    ok = tmp_path / "ok.txt"
    ok.write_bytes(b"x" * 100)
    assert read_input_bytes(ok, limit_bytes=100, what="a test file") == b"x" * 100
    with pytest.raises(InputError, match="larger than"):
        read_input_bytes(ok, limit_bytes=99, what="a test file")


# --------------------------------------------------------------------------- integers

@pytest.mark.parametrize("key, value, text", [
    ("days", "1" + "0" * 400, "integer of 401 digits (too large for a floating-point number)"),
    ("days", "-" + "9" * 400, "a negative integer of 400 digits"),
    ("elevation_bin_edges_deg", "[5, 1" + "0" * 400 + "]", "too large for a floating-point number"),
    ("days", "9" * 4400, "a number has too many digits"),
])
def test_huge_integers_in_a_scenario_are_one_line(tmp_path, capsys, key, value, text):
    # Bug: float() of a TOML integer beyond 1e308 raised OverflowError (a traceback); beyond 4300
    # digits tomllib raised a plain ValueError that read_toml did not catch.
    path = tmp_path / "huge.toml"
    path.write_text(SCENARIO_TOML.format(catalogs="", extra=f"\n[contacts]\n{key} = {value}\n"), encoding="utf-8")
    rc, out, err = run(capsys, "contacts", str(path))
    line = one_line(rc, out, err, str(path), text)
    assert len(line) < 400  # the number is described, not printed digit by digit


def test_int_field_beyond_64_bits_is_refused():
    # Bug: an "int" field without an upper bound accepted 2**64, which overflows numpy's int64 later.
    field = Field("window_frames", "int", low=1)
    assert convert(INT64_MAX, field, file="f.toml", where="key w", typed=True) == float(INT64_MAX)
    with pytest.raises(InputError, match="beyond the 64-bit integer range"):
        convert(INT64_MAX + 1, field, file="f.toml", where="key w", typed=True)
    with pytest.raises(InputError, match="too large for a floating-point number"):
        convert(10**400, Field("days"), file="f.toml", where="key days", typed=True)


# --------------------------------------------------------------------------- compression samples

def test_compression_measures_only_the_first_sample_bytes(tmp_path):
    # Bug: lzma ran over the whole file (a 200 MB random sample took 18 minutes). Zeros then random
    # bytes: measuring only the start gives exactly the ratios of the zeros.
    zeros = b"\0" * 65536
    noise = os.urandom(65536)
    path = tmp_path / "sample.bin"
    path.write_bytes(zeros + noise)
    assert dm.measure_compression(path, max_bytes=len(zeros)) == dm.compression_ratios(zeros)
    assert dm.compression_sample_bytes(path, max_bytes=len(zeros)) == (len(zeros), 2 * len(zeros))
    assert dm.measure_compression(path, max_bytes=10**9) == dm.compression_ratios(zeros + noise)


def test_two_gib_sparse_sample_is_bounded(tmp_path):
    # Bug: a 2 GB sparse sample took 222 s and 2.3 GB of memory; now the first 4 MiB only.
    assert dm.COMPRESSION_SAMPLE_BYTES == 4 * 1024 * 1024
    path = sparse_file(tmp_path / "huge.bin", 2 * 1024**3, tail=b"end")
    assert dm.measure_compression(path) == dm.compression_ratios(b"\0" * dm.COMPRESSION_SAMPLE_BYTES)


@needs_fifo
def test_compression_sample_that_is_a_fifo(tmp_path):
    # Bug: measure_compression opened a named pipe and waited forever.
    fifo = tmp_path / "sample.bin"
    os.mkfifo(fifo)
    with deadline(), pytest.raises(ValueError, match="not a regular file"):
        dm.measure_compression(fifo)


def test_demand_states_the_sample_size(tmp_path, capsys, monkeypatch):
    # Bug: the output did not say that only the start of a large sample file was measured.
    monkeypatch.setattr(dm, "COMPRESSION_SAMPLE_BYTES", 4096)  # keeps the test fast; the rule is the same
    sample = tmp_path / "sample.bin"
    sample.write_bytes(b"abc" * 4000)  # 12000 bytes, more than the 4096 measured
    payload = ('\n[[payloads]]\nname = "imager"\nraw_rate_bps = 1e6\n'
               'compression_sample_file = "sample.bin"\n')
    path = tmp_path / "demand.toml"
    path.write_text(SCENARIO_TOML.format(catalogs="", extra=payload), encoding="utf-8")
    rc, out, err = run(capsys, "demand", str(path))
    assert rc == 0, err
    assert "compression measured on the sample file (the first 4096 bytes of 12000)" in out
    assert "WARNING: payload 'imager': compression measured on the first 4096 bytes" in out
    sample.write_bytes(b"abc" * 1000)  # 3000 bytes: measured whole, no warning
    rc, out, err = run(capsys, "demand", str(path))
    assert rc == 0, err
    assert "compression measured on the sample file (all 3000 bytes)" in out and "WARNING" not in out
