"""Sweep files (tonebank.sweep_config): every mistake names its key and line.

The reference here is the TOML 1.0 specification (toml.io, tables and
key/value pairs) as read by the standard library's tomllib; the checks are
that each kind of mistake -- unknown key, wrong type, impossible value,
parts that do not fit, invalid TOML -- is reported with the file, the
line and the dotted key, and that a good file gives the link it says.
"""

import pytest

from tonebank.sweep_config import ConfigError, load_config, parse_config

GOOD = """\
# an invented test bench: a hilltop relay over a short fading hop
[link]
constellation = "qam16"
n_symbols = 6

[link.plan]
n_fft = 64
n_active = 52
cp_length = 16
pilot_spacing = 13
sample_rate = 20e6

[link.peak]
kind = "slm"
n_candidates = 4
side_tones = 4

[link.amplifier]
model = "rapp"
input_backoff_db = 8.0

[link.channel]
profile = "tdl_a"
delay_spread_s = 50e-9
n_rx = 2

[link.receiver]
estimation = "perfect"

[sweep]
parameter = "amplifier.input_backoff_db"
values = [4.0, 6.0]
snr_db = 20
seed = 7
output = "out.jsonl"

[sweep.stop]
min_errors = 50
max_bits = 1e5
"""


def test_good_file_builds_the_link_it_describes(tmp_path):
    path = tmp_path / "bench.toml"
    path.write_text(GOOD)
    cfg = load_config(path)
    assert cfg.parameter == "amplifier.input_backoff_db" and cfg.values == (4.0, 6.0)
    assert cfg.snr_db == 20.0 and cfg.seed == 7
    assert cfg.output == tmp_path / "out.jsonl"
    assert (cfg.stop.min_errors, cfg.stop.max_bits, cfg.stop.watch) == (50, 100000, "bit")
    link = cfg.link
    assert link.plan.n_fft == 64 and link.plan.n_pilots == 4 and link.n_rx == 2
    assert link.amplifier.input_backoff_db == 4.0
    assert cfg.build(6.0).amplifier.input_backoff_db == 6.0
    assert link.peak.n_side == 4 and link.receiver.estimation == "perfect"


def _line_of(text, needle):
    return next(i for i, line in enumerate(text.splitlines(), 1) if needle in line)


@pytest.mark.parametrize("old, new, key, message", [
    ("n_rx = 2", "n_rx = 0", "link.channel.n_rx", "must be >= 1"),                 # impossible
    ("n_rx = 2", 'n_rx = "two"', "link.channel.n_rx", "must be an integer"),       # type
    ("n_rx = 2", "n_rxx = 2", "link.channel.n_rxx", "unknown key"),               # unknown
    ('model = "rapp"', 'model = "tube"', "link.amplifier.model", "not allowed"),
    ("values = [4.0, 6.0]", 'values = [4.0, "x"]', "sweep.values", "must be a number"),
    ("min_errors = 50", "min_errors = 50\nconfidence = 1.5", "sweep.stop.confidence",
     "between 0 and 1"),
    ("n_active = 52", "n_active = 70", "link.plan", "not a valid plan"),
    ('parameter = "amplifier.input_backoff_db"', 'parameter = "colour"', "sweep.parameter",
     "cannot|not a key"),
])
def test_each_mistake_names_its_key_and_line(old, new, key, message):
    text = GOOD.replace(old, new)
    with pytest.raises(ConfigError, match=message) as info:
        parse_config(text, source="bench.toml")
    text_msg = str(info.value)
    assert f": {key}: " in text_msg
    line = int(text_msg.split(":")[1])
    probe = key.rpartition(".")[2]
    expected = _line_of(text, f"[{key}]") if key in ("link.plan",) else _line_of(text, probe)
    assert line == expected, text_msg


def test_a_bad_swept_value_is_caught_before_anything_runs(tmp_path):
    text = GOOD.replace('parameter = "amplifier.input_backoff_db"', 'parameter = "channel.n_rx"')
    text = text.replace("values = [4.0, 6.0]", "values = [1, 0]")
    text = text.replace("[link.peak]\nkind = \"slm\"\nn_candidates = 4\nside_tones = 4\n", "")
    with pytest.raises(ConfigError, match=r"sweep\.values: value 0\.0 of channel\.n_rx"):
        parse_config(text)


def test_invalid_toml_and_missing_tables(tmp_path):
    with pytest.raises(ConfigError, match="not valid TOML"):
        parse_config("[link\n")
    with pytest.raises(ConfigError, match=r"\[sweep\] is required"):
        parse_config('[link]\nconstellation = "qpsk"\n')
    with pytest.raises(ConfigError, match="link.constellation.*required"):
        parse_config("[link]\n[sweep]\nsnr_db = [1.0]\n")
    with pytest.raises(ConfigError, match="cannot read"):
        load_config(tmp_path / "missing.toml")
    with pytest.raises(ConfigError, match="parts do not fit"):
        parse_config('[link]\nconstellation = "qpsk"\n[link.plan]\nn_fft = 64\nn_active = 48\n'
                     "[sweep]\nsnr_db = [1.0]\n")
