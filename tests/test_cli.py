"""The command line: ``tonebank demo`` and ``tonebank info``."""

import subprocess
import sys

import numpy as np
import pytest

from tonebank import cli


def test_demo_self_check_passes(capsys):
    assert cli.main(["demo"]) == 0
    out = capsys.readouterr().out
    assert "backend" in out
    n = len(cli.SELF_CHECK_SIZES) * 4
    assert f"{n} of {n} checks passed" in out


def test_info_prints_the_report(capsys):
    assert cli.main(["info"]) == 0
    assert "fft_sizes" in capsys.readouterr().out


def test_no_command_prints_help_and_fails(capsys):
    assert cli.main([]) == 2
    assert "usage" in capsys.readouterr().err


def test_unknown_command_is_an_error():
    with pytest.raises(SystemExit) as exc:
        cli.main(["dance"])
    assert exc.value.code == 2


def test_module_entry_point_runs():
    r = subprocess.run([sys.executable, "-m", "tonebank", "info"], capture_output=True,
                       text=True, timeout=120)
    assert r.returncode == 0, r.stderr
    assert "backend" in r.stdout


def test_link_demo_agrees_with_theory():
    # Gray 16-QAM in AWGN: the closed form (Cho & Yoon 2002, via
    # tonebank.theory) must lie in each point's 99.9 % interval.
    from tonebank.cli import link_demo
    for row in link_demo(n_symbols=60):
        low, high = row["errors"].interval(0.999)
        assert low <= row["ber_theory"] <= high
        assert row["mer_db"] == pytest.approx(-20 * np.log10(row["evm_percent"] / 100))


def test_fading_demo_estimates_approach_the_true_channel():
    # With a 16-tap DFT fit over two averaged long training symbols the
    # channel error adds about 16/52/2 of the noise (van de Beek et al.,
    # VTC 1995): about 0.6 dB of EVM at high SNR.  At low SNR the MMSE
    # interplay adds more; the allowance of 2 dB is common practice, no
    # source (seeds 0-5 measured 0.25-1.5 dB).  Estimated-channel errors
    # are a little more frequent than with the true channel, and fall with
    # SNR.
    rows = cli.fading_demo(n_frames=16, n_symbols=10)
    for row in rows:
        assert 0.0 < row["evm_db"] - row["evm_perfect_db"] <= 2.0, row
        assert row["errors_perfect"].errors <= row["errors"].errors \
            <= 1.5 * row["errors_perfect"].errors + 10, row
    rates = [row["errors"].rate for row in rows]
    assert rates[0] > rates[1] > rates[2]
