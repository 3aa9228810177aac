"""The command line: ``tonebank demo``, ``info``, ``sweep`` and the help texts."""

import json
import subprocess
import sys

import numpy as np
import pytest

from tonebank import cli


def test_info_prints_the_report_and_the_self_check_passes(capsys):
    assert cli.main(["info"]) == 0
    out = capsys.readouterr().out
    assert "fft_sizes" in out
    n = len(cli.SELF_CHECK_SIZES) * 4
    assert f"{n} of {n} checks passed" in out
    assert cli.main(["info", "--no-check"]) == 0
    assert "checks passed" not in capsys.readouterr().out


def test_no_command_prints_help_and_fails(capsys):
    assert cli.main([]) == 2
    assert "usage" in capsys.readouterr().err


def test_unknown_command_is_an_error():
    with pytest.raises(SystemExit) as exc:
        cli.main(["dance"])
    assert exc.value.code == 2


@pytest.mark.parametrize("command", ["demo", "info", "sweep", "bench"])
def test_every_command_explains_itself(command, capsys):
    with pytest.raises(SystemExit) as exc:
        cli.main([command, "--help"])
    assert exc.value.code == 0
    out = capsys.readouterr().out
    assert len(out.splitlines()) > 5 and "usage: tonebank " + command in out


def test_demo_into_a_path_that_is_a_file_fails_cleanly(tmp_path, capsys):
    blocker = tmp_path / "taken"
    blocker.write_text("a file, not a folder")
    assert cli.main(["demo", "--quick", "--out", str(blocker)]) == 2
    assert "tonebank demo:" in capsys.readouterr().err


def test_bad_worker_count_is_an_argparse_error(capsys):
    with pytest.raises(SystemExit) as exc:
        cli.main(["demo", "--workers", "0"])
    assert exc.value.code == 2
    assert "must be >= 1" in capsys.readouterr().err


def test_module_entry_point_runs():
    r = subprocess.run([sys.executable, "-m", "tonebank", "info", "--no-check"],
                       capture_output=True, text=True, timeout=120)
    assert r.returncode == 0, r.stderr
    assert "backend" in r.stdout


def test_demo_runs_end_to_end_and_its_figures_open(tmp_path, capsys):
    from matplotlib import image

    assert cli.main(["demo", "--quick", "--out", str(tmp_path)]) == 0
    out = capsys.readouterr().out
    for needle in ("Error rates", "PAPR", "Occupied bandwidth", "ACLR", "Throughput",
                   "not compliance", "invented"):
        assert needle in out, needle
    pngs = sorted(tmp_path.glob("*.png"))
    assert [p.name for p in pngs] == sorted(
        ["bit_loading.png", "channel.png", "constellation.png", "error_rate.png",
         "papr_ccdf.png", "spectrum.png"])
    for png in pngs:
        pixels = image.imread(png)
        assert pixels.ndim == 3 and pixels.shape[0] > 200 and pixels.shape[1] > 300
        assert np.ptp(pixels[..., :3]) > 0.5, png          # not a blank page
    table = (tmp_path / "results.csv").read_text().splitlines()
    assert len(table) == 1 + 3 and "snr_db" in table[0]
    lines = (tmp_path / "sweep.jsonl").read_text().splitlines()
    assert len(lines) == 1 + 3
    assert json.loads(lines[0])  # the header parses


BPSK_SWEEP = """\
# an invented check: uncoded BPSK over AWGN with a perfect receiver
[link]
constellation = "bpsk"
n_symbols = 4
snr = "ebn0"
[link.plan]
n_fft = 64
n_active = 48
sample_rate = 1e6
[link.receiver]
estimation = "perfect"
[sweep]
snr_db = [0.0, 3.0]
seed = 5
frames_per_batch = 20
output = "bpsk.jsonl"
[sweep.stop]
min_errors = 50
max_bits = 20000
"""


def test_sweep_command_runs_and_a_second_run_resumes(tmp_path, capsys):
    cfg = tmp_path / "bpsk.toml"
    cfg.write_text(BPSK_SWEEP)
    assert cli.main(["sweep", str(cfg), "--quiet", "--csv", str(tmp_path / "bpsk.csv")]) == 0
    out = capsys.readouterr().out
    assert "results:" in out and out.count("\n") >= 3
    first = (tmp_path / "bpsk.jsonl").read_bytes()
    assert len(first.splitlines()) == 3
    assert (tmp_path / "bpsk.csv").exists()
    # Run again: every point is in the file, nothing runs and nothing changes.
    assert cli.main(["sweep", str(cfg), "--quiet"]) == 0
    assert (tmp_path / "bpsk.jsonl").read_bytes() == first


def test_sweep_command_rejects_a_bad_file_and_writes_nothing(tmp_path, capsys):
    cfg = tmp_path / "bad.toml"
    cfg.write_text(BPSK_SWEEP.replace("n_symbols = 4", "n_symbols = -4"))
    assert cli.main(["sweep", str(cfg)]) == 2
    err = capsys.readouterr().err
    assert "bad.toml:4: link.n_symbols: must be >= 1" in err
    assert not (tmp_path / "bpsk.jsonl").exists()


def test_sweep_command_on_a_dask_scheduler_writes_the_same_file(tmp_path, backend, capsys):
    # A loopback cluster stands in for machines on a network: the result file
    # equals the one a local run writes (the batches have their own streams).
    if backend != "c":
        pytest.skip("one cluster start is enough; runs under the 'c' parameter")
    distributed = pytest.importorskip("distributed")
    cfg = tmp_path / "bpsk.toml"
    cfg.write_text(BPSK_SWEEP)
    assert cli.main(["sweep", str(cfg), "--quiet", "--output", str(tmp_path / "local.jsonl")]) == 0
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  host="127.0.0.1", dashboard_address=None) as cluster:
        assert cli.main(["sweep", str(cfg), "--quiet", "--scheduler", cluster.scheduler_address,
                         "--output", str(tmp_path / "cluster.jsonl")]) == 0
    assert (tmp_path / "cluster.jsonl").read_bytes() == (tmp_path / "local.jsonl").read_bytes()
