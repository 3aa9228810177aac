"""Test vectors for a firmware port (tonebank.vectors).

Outside references: numpy's dtype byte-order characters ('<' is
little-endian; numpy reference, "Data type objects (dtype)") read the files
back independently of the module; Python's struct module ('<' standard
sizes, IEEE 754 binary32 / binary64) gives the expected bytes of known
values; zlib.crc32 and binascii.crc32 (Python standard library) give the
checksums; the system C compiler (gcc or clang, -std=c99 -Wall -Wextra
-Wpedantic -Werror) compiles the generated header, and a small C program
prints values and a bitwise CRC-32 that are compared with numpy and zlib.
"""

import binascii
import shutil
import struct
import subprocess
import tempfile
import zlib
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from tonebank import vectors
from tonebank.vectors import (
    MANIFEST_NAME,
    VectorFormatError,
    check_vectors,
    read_manifest,
    read_vectors,
    write_vectors,
)

DTYPES = ["int8", "int16", "int32", "int64", "uint8", "uint16", "uint32", "uint64",
          "float32", "float64", "complex64", "complex128"]


def same_bits(a, b):
    """True when ``a`` and ``b`` hold the same values bit for bit (NaN payloads too)."""
    return (a.dtype == b.dtype and a.shape == b.shape
            and np.ascontiguousarray(a).tobytes() == np.ascontiguousarray(b).tobytes())


# -- round trip ---------------------------------------------------------------


@st.composite
def vector_sets(draw):
    """1 to 3 named arrays of any supported dtype and shape (0-d and empty
    included), some given in big-endian byte order."""
    count = draw(st.integers(1, 3))
    out = {}
    for i in range(count):
        dtype = np.dtype(draw(st.sampled_from(DTYPES)))
        if draw(st.booleans()):
            dtype = dtype.newbyteorder(">")
        shape = draw(hnp.array_shapes(min_dims=0, max_dims=3, min_side=0, max_side=4))
        out[f"a{i}"] = draw(hnp.arrays(dtype, shape))
    return out


@settings(max_examples=25)
@given(arrays=vector_sets())
def test_round_trip_every_dtype_and_shape(arrays):
    with tempfile.TemporaryDirectory() as folder:
        manifest = write_vectors(folder, arrays)
        back = read_vectors(folder)
        assert list(back) == list(arrays) == list(manifest.names)
        for name, array in arrays.items():
            native = array.astype(array.dtype.newbyteorder("="))
            assert same_bits(back[name], native), name
            assert not back[name].flags.writeable


def test_round_trip_integer_pairs_axes_and_metadata(tmp_path):
    rng = np.random.default_rng(11)
    q15 = rng.integers(-2 ** 15, 2 ** 15, (3, 10, 2)).astype(np.int16)
    meta = {"scenario": "hive scale uplink, 3 symbols", "fft_size": 64, "scale": 0.125,
            "big": -2 ** 63}
    manifest = write_vectors(tmp_path, {"rx_q15": q15}, complex_pairs=["rx_q15"],
                             axes={"rx_q15": ["symbol", "sample"]}, metadata=meta)
    rec = manifest.records[0]
    assert (rec.type, rec.complex, rec.shape, rec.axes, rec.values, rec.nbytes) == (
        "int16", True, (3, 10), ("symbol", "sample"), 60, 120)
    back = read_vectors(tmp_path)
    assert same_bits(back["rx_q15"], q15)
    assert dict(back.metadata) == meta
    assert type(back.metadata["fft_size"]) is int and type(back.metadata["scale"]) is float
    assert read_manifest(tmp_path) == manifest


def test_metadata_float_reads_back_exactly(tmp_path):
    values = {"a": 0.1, "b": 1e-300, "c": -2.5e300, "d": 1 / 3}
    write_vectors(tmp_path, {"x": np.zeros(1, np.uint8)}, metadata=values)
    assert dict(read_manifest(tmp_path).metadata) == values


# -- bytes on disk -------------------------------------------------------------


@pytest.mark.parametrize("dtype,code", [
    ("int16", "<i2"), ("int32", "<i4"), ("int64", "<i8"), ("uint16", "<u2"),
    ("uint32", "<u4"), ("uint64", "<u8"), ("float32", "<f4"), ("float64", "<f8"),
])
@pytest.mark.parametrize("order", ["<", ">"])
def test_files_are_little_endian(tmp_path, dtype, code, order):
    values = np.array([1, 2, 0x12, 100], dtype=np.dtype(dtype).newbyteorder(order))
    write_vectors(tmp_path, {"v": values})
    data = (tmp_path / "v.bin").read_bytes()
    # numpy dtype spec: '<' is little-endian whatever the host's byte order.
    assert np.array_equal(np.frombuffer(data, dtype=code), values)
    # struct module: '<' standard sizes, little-endian; 'e/f/d' IEEE 754.
    fmt = {"int16": "h", "int32": "i", "int64": "q", "uint16": "H", "uint32": "I",
           "uint64": "Q", "float32": "f", "float64": "d"}[dtype]
    assert data == struct.pack("<4" + fmt, *values.tolist())


def test_known_bytes_of_int16_and_complex64(tmp_path):
    write_vectors(tmp_path, {"i": np.array([0x1234, -2], np.int16),
                             "z": np.array([1 - 2j], np.complex64)})
    # Two's complement, low byte first (struct '<h'): 0x1234 -> 34 12, -2 -> fe ff.
    assert (tmp_path / "i.bin").read_bytes() == bytes([0x34, 0x12, 0xFE, 0xFF])
    # Interleaved (re, im) float32 pairs: struct '<ff' of (1.0, -2.0).
    assert (tmp_path / "z.bin").read_bytes() == struct.pack("<ff", 1.0, -2.0)


# -- checksums -----------------------------------------------------------------


def test_crc_matches_zlib_and_binascii(tmp_path):
    rng = np.random.default_rng(3)
    arrays = {"a": rng.integers(-100, 100, 257).astype(np.int32),
              "b": rng.standard_normal((3, 7)).astype(np.float32),
              "c": np.zeros(0, np.int16)}
    manifest = write_vectors(tmp_path, arrays)
    text = (tmp_path / MANIFEST_NAME).read_text()
    for rec in manifest.records:
        data = (tmp_path / rec.file).read_bytes()
        assert rec.crc32 == zlib.crc32(data) == binascii.crc32(data)
        assert f"crc32=0x{zlib.crc32(data):08x}" in text


def test_crc_check_value(tmp_path):
    # The check value of CRC-32 (ISO-HDLC / zip) over the ASCII digits
    # "123456789" is 0xCBF43926 (from memory; also what zlib.crc32 gives).
    manifest = write_vectors(tmp_path, {"digits": np.frombuffer(b"123456789", np.uint8)})
    assert manifest.records[0].crc32 == 0xCBF43926 == zlib.crc32(b"123456789")


# -- manifest text -------------------------------------------------------------


def test_manifest_text_layout(tmp_path):
    write_vectors(tmp_path, {"rx": np.zeros((4, 80), np.complex64),
                             "gain": np.float64(0.5)},
                  axes={"rx": ("symbol", "sample")},
                  metadata={"scenario": "hive scale uplink, 4 symbols", "fft_size": 64})
    lines = (tmp_path / MANIFEST_NAME).read_text(encoding="ascii").split("\n")
    records = [line for line in lines if line and not line.startswith("#")]
    assert records[0] == ("format name=tonebank-vectors version=1 byteorder=little "
                          "layout=row-major arrays=2 metadata=2")
    assert records[1] == "meta name=scenario type=str value=hive scale uplink, 4 symbols"
    assert records[2] == "meta name=fft_size type=int value=64"
    assert records[3].startswith("array name=rx type=float32 complex=1 shape=4,80 "
                                 "axes=symbol,sample values=640 bytes=2560 file=rx.bin crc32=0x")
    assert records[4].startswith("array name=gain type=float64 complex=0 shape=- axes=- "
                                 "values=1 bytes=8 file=gain.bin crc32=0x")
    assert records[5] == "end" and lines[-1] == ""


# -- C header ------------------------------------------------------------------

COMPILERS = [c for c in ("gcc", "clang") if shutil.which(c)]

HEADER_ARRAYS = {
    "q15": np.array([[[-32768, 32767], [0, -1]], [[12345, -12345], [1, 2]],
                     [[3, 4], [5, 6]]], np.int16),
    "s8": np.array([-128, 127, 0], np.int8),
    "u8": np.array([0, 255, 7], np.uint8),
    "u16": np.array([65535, 1], np.uint16),
    "q31": np.array([-2 ** 31, 2 ** 31 - 1, -5], np.int32),
    "u32": np.array([2 ** 32 - 1, 0], np.uint32),
    "big": np.array([-2 ** 63, 2 ** 63 - 1, 3], np.int64),
    "ubig": np.array([2 ** 64 - 1, 0], np.uint64),
    "f32": np.array([1.5, -0.0, 1e-45, 3.4028235e38, 0.1], np.float32),
    "f64": np.array([[0.1, -1 / 3], [5e-324, 1.7976931348623157e308]]),
    "grid": np.array([[1 + 2j, -0.25 - 1e-3j]], np.complex64),
    "single": np.float64(2.5),
}

C_MAIN = r"""
#include <stdio.h>
#include <string.h>
#include "vec.h"

/* Bitwise CRC-32, reflected polynomial 0xEDB88320 (the zlib CRC). */
static uint32_t crc_byte(uint32_t crc, unsigned char byte)
{
    int k;
    crc ^= byte;
    for (k = 0; k < 8; k++)
        crc = (crc >> 1) ^ (0xEDB88320u & (0u - (crc & 1u)));
    return crc;
}

/* CRC of the little-endian bytes of every value, built by shifts so that the
   host's byte order does not matter. */
#define CRC_OF(arr, utype, nbytes) do {                                          \
        uint32_t c_ = 0xFFFFFFFFu; size_t i_; unsigned b_;                       \
        for (i_ = 0; i_ < sizeof(arr) / sizeof(arr[0]); i_++) {                  \
            utype u_; memcpy(&u_, &arr[i_], sizeof u_);                          \
            for (b_ = 0; b_ < (nbytes); b_++)                                    \
                c_ = crc_byte(c_, (unsigned char)(((uint64_t)u_ >> (8u * b_)) & 0xFFu)); \
        }                                                                        \
        printf("crc %s %08lx %lu\n", #arr, (unsigned long)(c_ ^ 0xFFFFFFFFu),    \
               (unsigned long)(sizeof(arr) / sizeof(arr[0])));                   \
    } while (0)

int main(void)
{
    size_t i;
    CRC_OF(q15, uint16_t, 2); CRC_OF(s8, uint8_t, 1); CRC_OF(u8, uint8_t, 1);
    CRC_OF(u16, uint16_t, 2); CRC_OF(q31, uint32_t, 4); CRC_OF(u32, uint32_t, 4);
    CRC_OF(big, uint64_t, 8); CRC_OF(ubig, uint64_t, 8); CRC_OF(f32, uint32_t, 4);
    CRC_OF(f64, uint64_t, 8); CRC_OF(grid, uint32_t, 4); CRC_OF(single, uint64_t, 8);
    for (i = 0; i < Q15_LEN; i++) printf("q15 %d\n", (int)q15[i]);
    for (i = 0; i < BIG_LEN; i++) printf("big %lld\n", (long long)big[i]);
    for (i = 0; i < UBIG_LEN; i++) printf("ubig %llu\n", (unsigned long long)ubig[i]);
    for (i = 0; i < F64_LEN; i++) printf("f64 %.17g\n", f64[i]);
    for (i = 0; i < GRID_LEN; i++) printf("grid %.9g\n", (double)grid[i]);
    printf("shape %d %u %u %d\n", Q15_NDIM, Q15_DIM0, Q15_DIM1, Q15_COMPLEX);
    printf("shape0 %d %u\n", SINGLE_NDIM, SINGLE_LEN);
    printf("macro %08lx\n", (unsigned long)Q15_CRC32);
    return 0;
}
"""


@pytest.fixture(scope="module", params=COMPILERS or ["none"])
def header_run(request, tmp_path_factory):
    """Write the header, compile a program against it, return (manifest, output lines)."""
    compiler = request.param
    if compiler == "none":
        pytest.skip("no C compiler (gcc or clang) on this machine")
    folder = tmp_path_factory.mktemp(f"header_{compiler}")
    manifest = write_vectors(folder, HEADER_ARRAYS, c_header="vec",
                             complex_pairs=["q15"], metadata={"note": "a */ b /* c ??/"})
    (folder / "main.c").write_text(C_MAIN)
    exe = folder / "main"
    build = subprocess.run(
        [compiler, "-std=c99", "-Wall", "-Wextra", "-Wpedantic", "-Werror",
         "-o", str(exe), str(folder / "main.c")],
        capture_output=True, text=True, cwd=folder)
    assert build.returncode == 0, build.stderr
    run = subprocess.run([str(exe)], capture_output=True, text=True, check=True)
    return manifest, run.stdout.splitlines()


def test_c_header_checksums_match_the_files(header_run):
    manifest, lines = header_run
    crcs = {p[1]: (int(p[2], 16), int(p[3])) for p in (ln.split() for ln in lines)
            if p[0] == "crc"}
    for rec in manifest.records:
        # The C program's bitwise CRC of the header's values equals zlib.crc32
        # of the .bin file: every value in the header is exact, bit for bit.
        assert crcs[rec.name] == (rec.crc32, rec.values), rec.name


def test_c_header_values_and_macros(header_run):
    manifest, lines = header_run

    def printed(tag):
        return [ln.split(" ", 1)[1] for ln in lines if ln.startswith(tag + " ")]

    assert [int(v) for v in printed("q15")] == HEADER_ARRAYS["q15"].reshape(-1).tolist()
    assert [int(v) for v in printed("big")] == HEADER_ARRAYS["big"].tolist()
    assert [int(v) for v in printed("ubig")] == HEADER_ARRAYS["ubig"].tolist()
    # %.17g round-trips a double (C99 7.19.6.1 with DECIMAL_DIG; from memory).
    assert [float(v) for v in printed("f64")] == HEADER_ARRAYS["f64"].reshape(-1).tolist()
    grid = HEADER_ARRAYS["grid"]
    pairs = np.stack([grid.real, grid.imag], axis=-1).reshape(-1)
    assert np.array_equal(np.array([float(v) for v in printed("grid")], np.float32), pairs)
    assert printed("shape") == ["2 3 2 1"]
    assert printed("shape0") == ["0 1"]
    assert printed("macro") == [f"{manifest.record('q15').crc32:08x}"]


# -- checker -------------------------------------------------------------------


@pytest.fixture
def uplink(tmp_path):
    """A reference folder (int16 pairs, float32, complex64) and an empty port folder."""
    rng = np.random.default_rng(2024)
    arrays = {
        "rx_q15": rng.integers(-2 ** 15, 2 ** 15, (4, 80, 2)).astype(np.int16),
        "bins": (rng.standard_normal((4, 16)) + 1j * rng.standard_normal((4, 16))
                 ).astype(np.complex64),
        "llr": rng.standard_normal(48).astype(np.float32),
    }
    ref, port = tmp_path / "ref", tmp_path / "port"
    write_vectors(ref, arrays, complex_pairs=["rx_q15"], metadata={"seed": 2024},
                  axes={"rx_q15": ("symbol", "sample"), "bins": ("symbol", "bin")})
    port.mkdir()
    return ref, port, arrays


def write_port(port, name, values, code):
    np.ascontiguousarray(values).astype(code).tofile(port / f"{name}.bin")


def test_checker_all_ok(uplink):
    ref, port, arrays = uplink
    shutil.copy(ref / "rx_q15.bin", port)
    write_port(port, "bins", arrays["bins"], "<c8")
    write_port(port, "llr", arrays["llr"], "<f4")
    result = check_vectors(ref, port)
    assert result.ok and [a.status for a in result.arrays] == ["ok"] * 3
    assert "all match" in str(result)


def test_checker_reports_the_flipped_value(uplink):
    ref, port, arrays = uplink
    got = arrays["rx_q15"].copy()
    got[2, 17, 1] ^= 0x0100            # one bit of one value, imaginary part
    got[3, 5, 0] += 1                  # a later value: counted, not first
    write_port(port, "rx_q15", got, "<i2")
    result = check_vectors(ref, port, names=["rx_q15"])
    check = result["rx_q15"]
    assert not result.ok and check.status == "mismatch" and check.mismatches == 2
    first = check.first
    flat = (2 * 80 + 17) * 2 + 1
    assert (first.value_index, first.byte_offset) == (flat, 2 * flat)
    assert (first.index, first.part) == ((2, 17), "im")
    assert (first.expected, first.got) == (int(arrays["rx_q15"][2, 17, 1]), int(got[2, 17, 1]))
    assert check.max_abs_difference == 256
    line = check.line()
    assert f"first at value {flat} (byte {2 * flat}) = rx_q15[symbol=2, sample=17].im" in line
    assert f"expected {first.expected}, got {first.got}" in line


def test_checker_complex_float_index_and_tolerance(uplink):
    ref, port, arrays = uplink
    got = arrays["bins"].copy()
    got[1, 3] += np.float32(1e-3)      # real part moves by 1e-3
    write_port(port, "bins", got, "<c8")
    exact = check_vectors(ref, port, names=["bins"])
    first = exact["bins"].first
    assert (first.index, first.part, first.value_index) == ((1, 3), "re", (16 + 3) * 2)
    assert first.expected == float(arrays["bins"][1, 3].real)
    assert first.got == float(got[1, 3].real)
    loose = check_vectors(ref, port, names=["bins"], atol=2e-3)
    assert loose.ok and 0 < loose["bins"].max_abs_difference < 2e-3
    assert not check_vectors(ref, port, names=["bins"], atol=1e-4).ok


def test_checker_float_nan_and_signed_zero(tmp_path):
    ref, port = tmp_path / "ref", tmp_path / "port"
    values = np.array([np.nan, 0.0, 1.0], np.float64)
    write_vectors(ref, {"x": values})
    port.mkdir()
    write_port(port, "x", np.array([np.nan, -0.0, 1.0]), "<f8")
    assert check_vectors(ref, port).ok
    write_port(port, "x", np.array([1.0, 0.0, 1.0]), "<f8")
    result = check_vectors(ref, port, rtol=1.0)
    assert result["x"].first.value_index == 0 and np.isnan(result["x"].first.expected)


def test_checker_sizes_missing_and_unreadable(uplink):
    ref, port, arrays = uplink
    data = (ref / "rx_q15.bin").read_bytes()
    (port / "rx_q15.bin").write_bytes(data[:-2])            # truncated by one value
    (port / "bins").mkdir()
    (port / "llr.bin").mkdir()                              # not a file
    result = check_vectors(ref, port)
    by_name = {a.record.name: a for a in result.arrays}
    assert by_name["rx_q15"].status == "size" and by_name["rx_q15"].got_bytes == 1278
    assert "expected 1280 bytes (640 int16 values), got 1278 bytes" in by_name["rx_q15"].line()
    assert by_name["bins"].status == "missing"
    assert "MISSING" in by_name["bins"].line() and "bins.bin" in by_name["bins"].line()
    assert by_name["llr"].status == "unreadable"
    (port / "rx_q15.bin").write_bytes(data + b"\0")        # one byte too many
    assert check_vectors(ref, port, names=["rx_q15"])["rx_q15"].got_bytes == 1281
    report = str(result)
    assert report.splitlines()[0].endswith("3 arrays, 3 do not match")
    # A port folder that does not exist: every array missing, nothing raised.
    assert {a.status for a in check_vectors(ref, port / "nowhere").arrays} == {"missing"}


def test_checker_accepts_a_vector_set(uplink):
    ref, port, arrays = uplink
    shutil.copy(ref / "llr.bin", port)
    result = check_vectors(read_vectors(ref), port, names=("llr",))
    assert result.ok and result.arrays[0].record.name == "llr"


def test_checker_result_is_immutable(uplink):
    ref, port, _ = uplink
    result = check_vectors(ref, port)
    with pytest.raises(AttributeError):
        result.arrays = ()
    with pytest.raises(AttributeError):
        result.arrays[0].status = "ok"


def test_checker_argument_errors(uplink):
    ref, port, _ = uplink
    with pytest.raises(ValueError, match="names lists 'nope'"):
        check_vectors(ref, port, names=["nope"])
    with pytest.raises(TypeError, match="names must be"):
        check_vectors(ref, port, names="llr")
    with pytest.raises(ValueError, match="atol=-1"):
        check_vectors(ref, port, atol=-1)
    with pytest.raises(TypeError, match="rtol"):
        check_vectors(ref, port, rtol="0.1")
    with pytest.raises(FileNotFoundError, match="manifest.txt"):
        check_vectors(port, ref)


# -- damaged reference folders -------------------------------------------------


def test_read_reports_damaged_files(uplink):
    ref, _, _ = uplink
    path = ref / "llr.bin"
    data = bytearray(path.read_bytes())
    data[5] ^= 0x01
    path.write_bytes(bytes(data))
    with pytest.raises(VectorFormatError, match=r"llr\.bin: CRC-32 is 0x[0-9a-f]{8}, but"):
        read_vectors(ref)
    path.write_bytes(bytes(data[:-4]))
    with pytest.raises(VectorFormatError, match=r"llr\.bin: 188 bytes, but manifest.txt says 192"):
        read_vectors(ref)
    path.unlink()
    with pytest.raises(VectorFormatError, match=r"llr\.bin: missing"):
        read_vectors(ref)


BAD_LINES = [
    # (line number to replace, new text, message fragment)
    (2, "format name=tonebank-vectors version=2 byteorder=little layout=row-major "
        "arrays=3 metadata=1", "version '2'"),
    (2, "format name=other version=1 byteorder=little layout=row-major arrays=3 metadata=1",
     "format name 'other'"),
    (3, "meta name=seed type=bool value=1", "metadata type 'bool'"),
    (3, "meta name=seed type=float value=nan", "not a finite decimal float"),
    (4, "array name=rx_q15 type=int12", "expected 9 fields"),
    (4, "array name=rx_q15 type=int12 complex=1 shape=4,80 axes=symbol,sample values=640 "
        "bytes=1280 file=rx_q15.bin crc32=0x00000000", "type='int12' is not one of"),
    (4, "array type=int16 name=rx_q15 complex=1 shape=4,80 axes=symbol,sample values=640 "
        "bytes=1280 file=rx_q15.bin crc32=0x00000000", "field 1 must be name=<value>"),
    (4, "array name=rx_q15 type=int16 complex=1 shape=4,80 axes=symbol,sample values=640 "
        "bytes=1280 file=rx_q15.bin crc32=0xABCDEF01", "8 lowercase hex digits"),
    (5, "array name=bins type=float32 complex=1 shape=4,16 axes=symbol,bin values=128 "
        "bytes=512 file=../bins.bin crc32=0x00000000", "file='../bins.bin'"),
    (5, "array name=bins type=float32 complex=1 shape=4,16 axes=symbol,bin values=100 "
        "bytes=400 file=bins.bin crc32=0x00000000", "values=100 but shape 4,16"),
    (5, "array name=bins type=float32 complex=2 shape=4,16 axes=- values=128 "
        "bytes=512 file=bins.bin crc32=0x00000000", "complex='2'"),
    (5, "array  name=bins", "expected 9 fields"),
    (6, "array type=float32 name=llr", "expected 9 fields"),
    (6, "tensor name=llr", "unknown record"),
    (7, "", "no end record"),
]


@pytest.mark.parametrize("number,text,fragment", BAD_LINES)
def test_bad_manifest_line_is_named(uplink, number, text, fragment):
    ref, _, _ = uplink
    path = ref / MANIFEST_NAME
    lines = path.read_text().split("\n")
    assert lines[2].startswith("meta") and lines[6] == "end"
    lines[number - 1] = text
    path.write_text("\n".join(lines))
    with pytest.raises(VectorFormatError) as info:
        read_manifest(ref)
    message = str(info.value)
    assert fragment in message
    if text:
        assert f"manifest.txt line {number}:" in message


def test_manifest_counts_and_trailing_records(uplink):
    ref, _, _ = uplink
    path = ref / MANIFEST_NAME
    text = path.read_text()
    path.write_text(text + "array name=x\n")
    with pytest.raises(VectorFormatError, match="line 8: .* follows the end record"):
        read_manifest(ref)
    path.write_text(text.replace("arrays=3", "arrays=4"))
    with pytest.raises(VectorFormatError, match="announces 4 arrays"):
        read_manifest(ref)
    path.write_bytes(text.encode().replace(b"\nend\n", b"\n\xe9nd\n"))
    with pytest.raises(VectorFormatError, match="line 7: not ASCII"):
        read_manifest(ref)
    path.write_text(text.replace("\n", "\r\n") + "\n# a comment\n")
    assert read_manifest(ref).names == ("rx_q15", "bins", "llr")


# -- argument errors -----------------------------------------------------------


@pytest.mark.parametrize("name,fragment", [
    ("1abc", "must match"), ("a-b", "must match"), ("int", "C keyword"),
    ("uint16_t", "C keyword"), ("__x", "reserved in C"), ("_X", "reserved in C"),
    ("x" * 65, "too long"), ("", "must match"),
])
def test_bad_array_names(tmp_path, name, fragment):
    with pytest.raises(ValueError, match=fragment) as info:
        write_vectors(tmp_path, {name: np.zeros(2, np.int16)})
    assert "array name" in str(info.value)
    assert not any(tmp_path.iterdir())


def test_names_differing_in_case(tmp_path):
    with pytest.raises(ValueError, match="differ only in case"):
        write_vectors(tmp_path, {"rx": np.zeros(1, np.int8), "RX": np.zeros(1, np.int8)})


@pytest.mark.parametrize("array,error,fragment", [
    (np.zeros(2, bool), TypeError, "dtype bool"),
    (np.zeros(2, np.float16), TypeError, "dtype float16"),
    (np.zeros(2, object), TypeError, "dtype object"),
    (np.zeros(2, "U3"), TypeError, "dtype <U3"),
    ([1, 2, 3], TypeError, "must be a numpy array; got list"),
    (3, TypeError, "must be a numpy array; got int"),
])
def test_unsupported_arrays(tmp_path, array, error, fragment):
    with pytest.raises(error, match=fragment) as info:
        write_vectors(tmp_path, {"x": array})
    assert "arrays['x']" in str(info.value)


@pytest.mark.parametrize("metadata,error,fragment", [
    ({"note": "caf\u00e9"}, ValueError, "printable ASCII"),
    ({"note": "two\nlines"}, ValueError, "printable ASCII"),
    ({"note": ""}, ValueError, "empty string"),
    ({"flag": True}, TypeError, "booleans"),
    ({"big": 2 ** 63}, ValueError, "int64"),
    ({"x": float("inf")}, ValueError, "finite"),
    ({"x": [1]}, TypeError, "str, int or float"),
    ({"bad key": 1}, ValueError, "metadata key"),
    ([("a", 1)], TypeError, "metadata must be a mapping"),
])
def test_bad_metadata(tmp_path, metadata, error, fragment):
    with pytest.raises(error, match=fragment):
        write_vectors(tmp_path, {"x": np.zeros(1, np.int8)}, metadata=metadata)


def test_bad_pairs_axes_and_folder_arguments(tmp_path):
    x = np.zeros((3, 2), np.int16)
    with pytest.raises(ValueError, match="complex_pairs names 'y'"):
        write_vectors(tmp_path, {"x": x}, complex_pairs=["y"])
    with pytest.raises(ValueError, match="no last axis of length 2"):
        write_vectors(tmp_path, {"x": np.zeros((2, 3), np.int16)}, complex_pairs=["x"])
    with pytest.raises(ValueError, match="pass a complex64"):
        write_vectors(tmp_path, {"x": np.zeros((3, 2))}, complex_pairs=["x"])
    with pytest.raises(ValueError, match="already complex"):
        write_vectors(tmp_path, {"x": np.zeros(3, np.complex64)}, complex_pairs=["x"])
    with pytest.raises(TypeError, match="complex_pairs must be"):
        write_vectors(tmp_path, {"x": x}, complex_pairs="x")
    with pytest.raises(ValueError, match=r"axes\['x'\] has 1 names"):
        write_vectors(tmp_path, {"x": x}, axes={"x": ["symbol"]})
    with pytest.raises(ValueError, match=r"axes\['x'\] has 2 names"):
        write_vectors(tmp_path, {"x": x}, complex_pairs=["x"], axes={"x": ["a", "b"]})
    with pytest.raises(ValueError, match="axes names array 'z'"):
        write_vectors(tmp_path, {"x": x}, axes={"z": ["a"]})
    with pytest.raises(TypeError, match=r"axes\['x'\] must be a sequence"):
        write_vectors(tmp_path, {"x": x}, axes={"x": "ab"})
    with pytest.raises(ValueError, match="arrays is empty"):
        write_vectors(tmp_path, {})
    with pytest.raises(TypeError, match="arrays must be a mapping"):
        write_vectors(tmp_path, [x])
    assert not any(tmp_path.iterdir())
    write_vectors(tmp_path, {"x": x})
    with pytest.raises(FileExistsError, match="overwrite=True"):
        write_vectors(tmp_path, {"x": x})
    write_vectors(tmp_path, {"x": x + 1}, overwrite=True)
    assert read_vectors(tmp_path)["x"][0, 0] == 1


def test_c_header_refusals_write_nothing(tmp_path):
    with pytest.raises(ValueError, match=r"c_header: arrays\['x'\] holds NaN"):
        write_vectors(tmp_path, {"x": np.array([np.nan])}, c_header="vec")
    with pytest.raises(ValueError, match="no values"):
        write_vectors(tmp_path, {"x": np.zeros(0, np.int16)}, c_header="vec")
    with pytest.raises(ValueError, match="collides"):
        write_vectors(tmp_path, {"a": np.zeros(1, np.int8), "A_LEN": np.zeros(1, np.int8)},
                      c_header="vec")
    with pytest.raises(ValueError, match="include guard"):
        write_vectors(tmp_path, {"VEC_H": np.zeros(1, np.int8)}, c_header="vec")
    with pytest.raises(ValueError, match="c_header='my-vectors'"):
        write_vectors(tmp_path, {"x": np.zeros(1, np.int8)}, c_header="my-vectors")
    assert not any(tmp_path.iterdir())


def test_read_missing_folder(tmp_path):
    with pytest.raises(FileNotFoundError, match="not a vector folder"):
        read_vectors(tmp_path / "absent")


def test_public_names():
    assert all(hasattr(vectors, name) for name in vectors.__all__)
    assert (vectors.FORMAT_NAME, vectors.FORMAT_VERSION, vectors.MANIFEST_NAME) == (
        "tonebank-vectors", 1, "manifest.txt")


# -- the firmware example of docs/guide_porting.rst -----------------------------

GUIDE = Path(__file__).resolve().parents[1] / "docs" / "guide_porting.rst"

PORT_ROUNDING = r"""
#include <stdint.h>
void q15_gain_port(const int16_t *in, int16_t gain, int16_t *out, unsigned n)
{
    unsigned i;
    for (i = 0; i < n; i++) {
        int32_t p = (int32_t)in[i] * gain + (1 << 14);
        int32_t y = p >= 0 ? p / 32768 : -((-p + 32767) / 32768);   /* floor(p / 2^15) */
        out[i] = (int16_t)(y > 32767 ? 32767 : y < -32768 ? -32768 : y);
    }
}
"""
PORT_TRUNCATING = PORT_ROUNDING.replace(" + (1 << 14);", ";")


def guide_c_example():
    """The C code block of the guide, as the reader sees it."""
    lines = GUIDE.read_text().split("\n")
    start = lines.index(".. code-block:: c") + 2
    block = []
    for line in lines[start:]:
        if line and not line.startswith("   "):
            break
        block.append(line[3:])
    return "\n".join(block)


def q15_gain(x, gain):
    y = (x.astype(np.int32) * int(gain) + (1 << 14)) >> 15
    return np.clip(y, -2 ** 15, 2 ** 15 - 1).astype(np.int16)


@pytest.mark.skipif(not COMPILERS, reason="no C compiler (gcc or clang) on this machine")
@pytest.mark.skipif(not GUIDE.exists(), reason="docs not in this tree")
def test_guide_firmware_example_agrees_with_the_checker(tmp_path):
    rng = np.random.default_rng(42)
    rx = rng.integers(-2 ** 15, 2 ** 15, (4, 80, 2), dtype=np.int16)
    gain = np.int16(23170)
    ref = tmp_path / "ref"
    write_vectors(ref, {"rx_q15": rx, "gain_q15": gain, "out_q15": q15_gain(rx, gain)},
                  complex_pairs=["rx_q15", "out_q15"],
                  axes={"out_q15": ("symbol", "sample")})
    (tmp_path / "test.c").write_text(guide_c_example())
    outputs = {}
    for label, port_code in (("rounding", PORT_ROUNDING), ("truncating", PORT_TRUNCATING)):
        (tmp_path / f"{label}.c").write_text(port_code)
        exe = tmp_path / label
        build = subprocess.run(
            [COMPILERS[0], "-std=c99", "-Wall", "-Wextra", "-Wpedantic", "-Werror", "-o",
             str(exe), str(tmp_path / "test.c"), str(tmp_path / f"{label}.c")],
            capture_output=True, text=True)
        assert build.returncode == 0, build.stderr
        run = subprocess.run([str(exe), str(ref)], capture_output=True, text=True)
        outputs[label] = (run.returncode, run.stdout.strip())
    assert outputs["rounding"] == (0, "out_q15: OK")
    # The same port in numpy, written as raw files, through the checker: the
    # C example and check_vectors must name the same first value.
    port = tmp_path / "port"
    port.mkdir()
    truncated = np.clip((rx.astype(np.int32) * int(gain)) >> 15, -2 ** 15, 2 ** 15 - 1)
    truncated.astype("<i2").tofile(port / "out_q15.bin")
    check = check_vectors(ref, port, names=["out_q15"])["out_q15"]
    m = check.first
    status, text = outputs["truncating"]
    assert status == 1
    assert text == (f"out_q15: {check.mismatches} values differ; first at value "
                    f"{m.value_index} = [symbol={m.index[0]}, sample={m.index[1]}].{m.part}: "
                    f"expected {m.expected}, got {m.got}")
