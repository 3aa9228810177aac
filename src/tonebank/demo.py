"""The demonstration behind ``tonebank demo``: the main job on an invented scenario.

The scenario (invented): a fictional network of river-level sensors in
hilly terrain reports every few minutes to a gateway on a ridge.  The
gateway has two receive antennas.  The link: a 1.6 MHz, 128-point CP-OFDM
plan with a pilot on every fourth subcarrier, 16-QAM, selective mapping
against the peaks, a Rapp amplifier at a 6 dB input back-off, the
3GPP TR 38.901 TDL-C profile scaled to a 1 microsecond delay spread (valley
walls reflect from far away), LMMSE channel estimation and maximal-ratio
combining.

:func:`run_demo` sweeps the error rate over Es/N0 with the library's
sweep engine, measures the PAPR with and without selective mapping, the
spectrum of the amplified signal against an illustrative mask, and the
throughput; it prints a short report and writes the figures (PNG), the
results table (CSV) and the sweep's result file into a folder.

All figures are engineering estimates from a simulation model, not
measurements; spectra and masks are not compliance measurements: local
radio regulations and accredited test practice decide what may be
transmitted.
"""

from __future__ import annotations

import math
import sys
import time
from pathlib import Path

import numpy as np

from . import loading, papr, spectrum, theory
from .amplifier import RappAmplifier, drive
from .channel import DelayProfile
from .constellation import Constellation
from .link import Amplifier, Fading, Link, Receiver
from .papr import SelectiveMapping
from .plan import CarrierPlan
from .waveforms import CpOfdm

__all__ = ["DEMO_ESN0_DB", "ILLUSTRATIVE_MASK", "river_sensor_link", "run_demo"]

#: Es/N0 points of the error-rate sweep, dB (per used subcarrier, prefix included).
DEMO_ESN0_DB = (4.0, 8.0, 12.0, 16.0, 20.0, 24.0)

#: An illustrative spectral mask of our own (offset from the carrier in
#: units of the occupied bandwidth, limit in dB relative to the PSD peak).
#: Not any regulator's mask.
ILLUSTRATIVE_MASK = ((0.5, 0.0), (0.6, -20.0), (1.0, -30.0), (1.5, -35.0), (2.0, -35.0))

_SAMPLE_RATE = 1.6e6
_N_SYMBOLS = 12


def river_sensor_link() -> Link:
    """The demo scenario's link (see the module notes).

    Returns
    -------
    tonebank.link.Link

    Examples
    --------
    >>> from tonebank.demo import river_sensor_link
    >>> link = river_sensor_link()
    >>> link.n_rx, link.bits_per_frame
    (2, 3168)
    """
    # Pilot signs from a fixed pseudo-random sequence: equal pilots would add up
    # to a pulse train in time, raising the PAPR and meeting the amplifier's
    # compression at its peaks (so the pilots would see less gain than the data).
    signs = 1.0 - 2.0 * np.random.default_rng(11).integers(0, 2, 24)
    plan = CarrierPlan.centered(128, 96, pilot_spacing=4, cp_length=16, pilot_values=signs,
                                sample_rate=_SAMPLE_RATE)
    slm = SelectiveMapping(plan, n_candidates=8, phases="psk8",
                           side_subcarriers=plan.data_subcarriers[:6])
    profile = DelayProfile.published("tdl_c", delay_spread_s=1e-6)
    return Link(plan, Constellation.qam(16), n_symbols=_N_SYMBOLS, peak=slm,
                amplifier=Amplifier(RappAmplifier(smoothness=2.0), input_backoff_db=6.0),
                channel=Fading(profile, n_rx=2),
                receiver=Receiver(frequency="lmmse", time="average", combining="mrc"))


def _frame_seconds(link: Link) -> float:
    return link.plan.n_samples(link.n_symbols) / link.plan.sample_rate


def _papr_study(link: Link, n_symbols: int, rng) -> dict:
    """Symbol PAPR with and without selective mapping (oversampled by 4)."""
    plan, slm = link.plan, link.peak
    bits = rng.integers(0, 2, (n_symbols, slm.n_payload * link.constellation.bits_per_symbol))
    payload = link.constellation.map(bits).reshape(n_symbols, slm.n_payload)
    chosen = slm.select(payload)
    plain = plan.place(link.constellation.map(
        rng.integers(0, 2, n_symbols * plan.n_data * 4)))
    return {"plain": papr.symbol_papr_db(plain, oversampling=4), "slm": chosen.papr_db,
            "grid": chosen.grid, "n_used": plan.n_data + plan.n_pilots}


def _spectrum_study(link: Link, grid: np.ndarray) -> dict:
    """PSD, occupied bandwidth, ACLR and mask margin of the amplified signal (oversampled by 4)."""
    plan = link.plan
    ofdm = CpOfdm(plan, oversampling=4)
    fs = ofdm.sample_rate
    x = ofdm.synthesize(grid)
    bandwidth = plan.occupied_bandwidth
    amp = link.amplifier
    out = drive(x, amp.model, input_backoff_db=amp.input_backoff_db, sample_rate=fs,
                channel_bandwidth=bandwidth)
    y = out.samples
    freqs, density = spectrum.psd(y, fs, segment_length=1024)
    mask = np.array([(f * bandwidth, level) for f, level in ILLUSTRATIVE_MASK])
    check = spectrum.check_mask(y, fs, mask, segment_length=1024)
    return {"freqs": freqs, "psd": density, "mask": mask, "check": check,
            "obw": spectrum.occupied_bandwidth(y, fs, segment_length=1024),
            "aclr_db": out.aclr_db, "amp_evm": out.evm_percent, "bandwidth": bandwidth,
            "sample_rate": fs}


def _theory_ber(link: Link, esn0_db) -> np.ndarray:
    """16-QAM with 2-branch MRC in Rayleigh fading at the bin SNR: the bound the link approaches."""
    bps = link.constellation.bits_per_symbol
    ebn0 = [theory.esn0_to_ebn0_db(link.bin_snr_db(e), bps) for e in esn0_db]
    return np.asarray(theory.ber_qam_mrc(link.constellation.order, ebn0, link.n_rx))


def _loading_study(link: Link, channel: np.ndarray, esn0_db: float) -> dict:
    """Bits per tone that the combined channel of one frame would carry at ``esn0_db``."""
    plan = link.plan
    used = np.sort(np.concatenate((plan.data_subcarriers, plan.pilot_subcarriers)))
    bins = used % plan.n_fft
    # MRC adds the branch powers: the SNR of tone k is |H_1|^2 + |H_2|^2 times the bin SNR.
    combined = np.sum(np.abs(channel[0, :, 0, bins]) ** 2, axis=-1)   # frame 0, symbol 0
    noise_var = 10.0 ** (-link.bin_snr_db(esn0_db) / 10.0)
    g = loading.gain_to_noise(np.sqrt(combined), noise_var)
    gap = loading.snr_gap_db(1e-5)
    table = loading.levin_campello(g, gap_db=gap, total_energy=float(used.size), max_bits=10,
                                   granularity=2)
    return {"table": table, "snr_db": 10 * np.log10(g), "subcarriers": used, "gap_db": gap}


def _write_figures(out: Path, results, esn0, theory_ber, papr_data, spec, detail, load,
                   link: Link) -> list[Path]:
    """Draw the six figures into ``out`` as PNG files; return their paths."""
    from . import plots
    from .metrics import ErrorCount

    def counts(unit):
        return [ErrorCount(p.counts[f"{unit}_errors"], p.counts[f"{unit}s"])
                for p in results.points]

    figures = {
        "error_rate.png": plots.error_rate_figure(
            esn0, {"bits": counts("bit")},
            theory={"16-QAM, 2-branch MRC, Rayleigh, perfect channel knowledge": theory_ber},
            xlabel="Es/N0 per subcarrier (dB)",
            title="River sensors to ridge gateway: simulated link"),
        "papr_ccdf.png": plots.papr_ccdf_figure(
            {"no peak control": papr_data["plain"], "SLM, 8 candidates": papr_data["slm"]},
            # alpha = 2.8: the oversampled envelope's correction (see ccdf_theory).
            theory={"theory, 1 candidate": lambda z: papr.ccdf_theory(
                        z, papr_data["n_used"], alpha=2.8),
                    "theory, 8 candidates": lambda z: papr.ccdf_theory(
                        z, papr_data["n_used"], alpha=2.8, n_candidates=8)},
            title="Symbol PAPR (4x oversampled)"),
        "spectrum.png": plots.psd_figure(
            spec["freqs"], {"after the amplifier": spec["psd"]}, mask=spec["mask"],
            mask_check=spec["check"],
            title="Transmit spectrum, illustrative mask (engineering estimate)"),
        "constellation.png": plots.constellation_figure(
            detail["symbols"][0], link.constellation,
            evm_percent=100 * math.sqrt(np.mean(np.abs(detail["symbols"] - detail["sent"]) ** 2)),
            title="Equalised 16-QAM after MRC (Es/N0 20 dB)"),
        "channel.png": plots.channel_response_figure(
            detail["channel_true"][0, :, 0, link.plan.data_bins].T,
            estimate=detail["channel"][0, :, 0, link.plan.data_bins].T,
            subcarriers=link.plan.data_subcarriers, labels=["antenna 1", "antenna 2"],
            title="One frame's channel: truth (solid) and LMMSE estimate (dashed)"),
        "bit_loading.png": plots.bit_loading_figure(
            load["table"], snr_db=load["snr_db"], subcarriers=load["subcarriers"],
            title="Bits per tone this channel could carry (Levin-Campello)"),
    }
    paths = []
    for name, fig in figures.items():
        path = out / name
        fig.savefig(path, dpi=90)
        paths.append(path)
    return paths


def run_demo(out_dir=None, *, quick: bool = False, workers: int = 1, stream=None,
             seed: int = 2026) -> dict:
    """Run the demonstration: sweep, PAPR, spectrum, throughput; print and write the results.

    Parameters
    ----------
    out_dir : str or os.PathLike, optional
        Folder for the figures (PNG), ``results.csv`` and ``sweep.jsonl``;
        created if missing.  None: print only (no files, no figures).
    quick : bool, optional
        A reduced run (fewer frames and points, default false), for tests.
    workers : int, optional
        Processes for the sweep (default 1).
    stream : object, optional
        A text stream with ``write`` where the report goes (default
        standard output).
    seed : int, optional
        Root seed of everything random (default 2026).

    Returns
    -------
    dict
        ``"sweep"`` (:class:`tonebank.sweep_results.SweepResult`), ``"files"``
        (paths written), and the figures of the report (``"papr_db"``,
        ``"obw_hz"``, ``"aclr_db"``, ``"rate_bps"``, ``"frames_per_s"``).
    """
    from .sweep import StopRule, Sweep

    stream = sys.stdout if stream is None else stream

    def say(text=""):
        print(text, file=stream)

    rng = np.random.default_rng(seed)
    link = river_sensor_link()
    esn0 = DEMO_ESN0_DB[::2] if quick else DEMO_ESN0_DB
    # Every bit of a frame shares the frame's fade, so a point needs many frames,
    # not only many errors: batches of 100 frames (20 in the quick run).
    per_batch = 20 if quick else 100
    stop = (StopRule(min_errors=40, max_bits=40 * link.bits_per_frame) if quick
            else StopRule(min_errors=500, max_bits=1000 * link.bits_per_frame))
    say("River-level sensors to a ridge gateway (an invented scenario): 128-point CP-OFDM at")
    say(f"{_SAMPLE_RATE / 1e6:g} MHz, 16-QAM, pilots on every 4th subcarrier, SLM (8 candidates),"
        " Rapp amplifier")
    say("at 6 dB input back-off, TDL-C fading (1 us delay spread), 2 receive antennas with "
        "LMMSE")
    say("estimation and MRC.  Engineering estimates from a simulation model, not measurements.")

    out = None
    if out_dir is not None:
        out = Path(out_dir)
        out.mkdir(parents=True, exist_ok=True)
        # The demo's own result file: a fresh sweep each time, not a resume.
        (out / "sweep.jsonl").unlink(missing_ok=True)
    start = time.perf_counter()
    job = Sweep.over_snr(link, esn0, stop=stop, frames_per_batch=per_batch, seed=seed)
    results = job.run(None if out is None else out / "sweep.jsonl", workers=workers,
                      progress=True)
    elapsed = time.perf_counter() - start
    frames = sum(p.counts["frames"] for p in results.points)
    theory_ber = _theory_ber(link, esn0)
    rate = link.bits_per_frame / _frame_seconds(link)

    say("\nError rates (95% Wilson intervals); the theory is 16-QAM with 2-branch MRC in "
        "Rayleigh")
    say("fading and perfect channel knowledge, the bound this receiver approaches.  The bits")
    say("of a frame share its fade, so the intervals (bits taken as independent) understate")
    say("the spread over channel realisations:")
    say(f"  {'Es/N0':>6s}  {'bits':>8s}  {'BER':>9s}  {'95% interval':>21s}  {'theory':>9s}  "
        f"{'FER':>6s}  {'EVM':>6s}  {'goodput':>10s}")
    for p, th in zip(results.points, theory_ber):
        low, high = p.interval("bit")
        evm = p.evm
        say(f"  {p.snr_db:4.1f}dB  {p.counts['bits']:8d}  {p.ber:9.2e}  [{low:9.2e}, {high:9.2e}]"
            f"  {th:9.2e}  {p.fer:6.3f}  {100 * evm:5.1f}%  {rate * (1 - p.fer) / 1e3:7.1f}kb/s")

    papr_data = _papr_study(link, 200 if quick else 2000, rng)
    p_plain = float(np.percentile(papr_data["plain"], 99))
    p_slm = float(np.percentile(papr_data["slm"], 99))
    say(f"\nPAPR exceeded by 1% of symbols: {p_plain:.1f} dB without peak control, "
        f"{p_slm:.1f} dB with SLM")
    spec = _spectrum_study(link, papr_data["grid"][: 60 if quick else 400])
    say(f"Occupied bandwidth (99% of the power): {spec['obw'] / 1e3:.0f} kHz of "
        f"{spec['bandwidth'] / 1e3:.0f} kHz nominal; ACLR {spec['aclr_db'][0]:.1f} / "
        f"{spec['aclr_db'][1]:.1f} dB (lower / upper)")
    check = spec["check"]
    verdict = ("inside" if check.passed else
               f"OUTSIDE, worst at {abs(check.worst_frequency) / 1e3:.0f} kHz from the carrier "
               "(more back-off or clip-and-filter would help)")
    say(f"Illustrative mask of our own: {verdict}; margin {check.margin_db:.1f} dB.")
    say("Spectra here are engineering estimates, not compliance measurements: local radio")
    say("regulations and accredited test practice decide.")
    say(f"\nThroughput: {rate / 1e3:.1f} kb/s of data on air ({link.bits_per_frame} bits "
        f"per {1e3 * _frame_seconds(link):.2f} ms frame; goodput above counts only frames")
    say(f"without bit errors).  The simulation ran {frames / elapsed:.0f} frames/s on "
        f"{workers} worker(s).")

    files = []
    if out is not None:
        detail = link.run(4, 20.0, np.random.default_rng(seed + 1), detail=True).detail
        load = _loading_study(link, detail["channel_true"], 20.0)
        files = _write_figures(out, results, esn0, theory_ber, papr_data, spec, detail, load,
                               link)
        results.to_csv(out / "results.csv")
        files += [out / "results.csv", out / "sweep.jsonl"]
        say(f"\nWrote {len(files)} files to {out}: " + ", ".join(f.name for f in files))
    return {"sweep": results, "files": files, "papr_db": (p_plain, p_slm),
            "obw_hz": spec["obw"], "aclr_db": spec["aclr_db"], "rate_bps": rate,
            "frames_per_s": frames / elapsed}
