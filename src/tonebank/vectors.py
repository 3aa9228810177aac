r"""Test vectors for a firmware port: export, read back, check a port's output.

A port of a modem chain to an integer DSP or a microcontroller is unit-tested
against *reference vectors*: the inputs of each stage and the outputs the
Python prototype computed from them, bit for bit.  This module writes named
numpy arrays as raw little-endian files with a small text manifest (and,
optionally, a C header for targets without a file system), reads them back,
and compares the files a port wrote with the reference, reporting the first
mismatch of every array.  It knows nothing of OFDM: any named integer or
float arrays can be exported.

.. rubric:: The vector folder

:func:`~tonebank.vectors.write_vectors` writes, into one folder:

* one raw binary file ``<name>.bin`` per array: its values in row-major
  (C) order, the last axis varying fastest, each value little-endian
  whatever the byte order of the machine that wrote it, no header and no
  padding.  A complex array is stored as interleaved ``(re, im)`` pairs
  of its real type (complex64 as float32 pairs, complex128 as float64
  pairs); an integer array whose last axis holds ``(re, im)`` (Q15 or Q31
  samples, say) can be marked as pairs with ``complex_pairs=``;
* ``manifest.txt``, described below;
* with ``c_header="stem"``, also ``stem.h`` holding the same values as C
  arrays (see :func:`~tonebank.vectors.write_vectors`).

.. rubric:: The manifest (format ``tonebank-vectors``, version 1)

ASCII text, ``\n`` line ends, one record per line.  Empty lines and lines
starting with ``#`` are comments.  Every other line is a record: a kind
word, then fields ``key=value`` separated by single spaces, the keys always
present and always in the order shown, values never quoted and never
empty.  The records come in this order (the checksums here are
illustrative)::

    format name=tonebank-vectors version=1 byteorder=little layout=row-major arrays=2 metadata=2
    meta name=scenario type=str value=hive scale uplink, 4 symbols
    meta name=fft_size type=int value=64
    array name=rx_time type=int16 complex=1 shape=4,80 axes=symbol,sample values=640 bytes=1280 file=rx_time.bin crc32=0x5d0c41e2
    array name=gain type=float64 complex=0 shape=- axes=- values=1 bytes=8 file=gain.bin crc32=0x0e51f1a4
    end

``format``
    First record.  ``arrays`` and ``metadata`` count the ``array`` and
    ``meta`` records that follow.
``meta``
    Free-form metadata, one record per key: ``name`` (an identifier),
    ``type`` (``str``, ``int`` or ``float``) and ``value``, the last field,
    which runs to the end of the line and may hold spaces.  Integers are
    decimal and fit in int64; floats are finite and written so that C's
    ``strtod`` reads back the same double; strings are printable ASCII.
``array``
    One per array, in the order they were given:

    ``name``
        The array's name, ``[A-Za-z_][A-Za-z0-9_]*``, also a valid C
        identifier (no C keyword, no name reserved to C implementations),
        unique within the folder even ignoring case.
    ``type``
        The type of each stored value: ``int8``, ``int16``, ``int32``,
        ``int64``, ``uint8``, ``uint16``, ``uint32``, ``uint64``,
        ``float32`` or ``float64`` (IEEE 754 binary32 / binary64).
    ``complex``
        ``1`` when the values come in interleaved ``(re, im)`` pairs,
        else ``0``.
    ``shape``
        The sizes of the axes, outermost first, separated by commas; for
        pairs the pair axis is not counted (a complex ``4 x 80`` array has
        ``shape=4,80`` and 640 values).  ``-`` for a single value (a 0-d
        array).
    ``axes``
        Names of the axes (identifiers, as many as the shape has sizes),
        or ``-``; used by the checker's report only.
    ``values``
        Number of stored values: the product of the shape, times 2 for
        pairs.
    ``bytes``
        Size of the file: ``values`` times the size of ``type``.
    ``file``
        ``<name>.bin`` (always; the field saves a reader building the name).
    ``crc32``
        CRC-32 of the file's bytes, ``0x`` and 8 lowercase hex digits:
        the CRC of ISO-HDLC / zip / PNG (reflected polynomial
        ``0xEDB88320``, initial value and final XOR ``0xFFFFFFFF``), as
        ``zlib.crc32`` computes it.
``end``
    Last record: a manifest without it was cut short.

Nothing else may follow ``end`` except comments.  A C parser needs only
``fgets``, ``strtok``-style splitting on spaces and ``strtoul`` / ``strtod``
(see :doc:`/guide_porting`).

.. rubric:: What a port writes

:func:`~tonebank.vectors.check_vectors` reads a port's output folder as raw files only: for
each reference array it checks, the port writes ``<name>.bin`` with the
reference's type, value count, byte order (little-endian) and row-major
order; a manifest in the port folder is not read.  The checker takes the
type and shape from the *reference* manifest.

Matching vectors show that a port computes the same numbers as the
prototype; they are not a measurement of a transmitter, and say nothing
about emissions or compliance with radio regulations.
"""

from __future__ import annotations

import math
import numbers
import os
import re
import zlib
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass
from pathlib import Path
from types import MappingProxyType

import numpy as np

__all__ = [
    "FORMAT_NAME",
    "FORMAT_VERSION",
    "MANIFEST_NAME",
    "ArrayRecord",
    "Manifest",
    "VectorSet",
    "Mismatch",
    "ArrayCheck",
    "CheckResult",
    "VectorFormatError",
    "write_vectors",
    "read_manifest",
    "read_vectors",
    "check_vectors",
]

#: The ``name`` of the manifest's ``format`` record.
FORMAT_NAME = "tonebank-vectors"
#: The manifest format version this module writes and reads.
FORMAT_VERSION = 1
#: File name of the manifest inside a vector folder.
MANIFEST_NAME = "manifest.txt"

# Stored type name -> little-endian numpy dtype, and its C type.
_TYPES = {
    "int8": ("<i1", "int8_t"),
    "int16": ("<i2", "int16_t"),
    "int32": ("<i4", "int32_t"),
    "int64": ("<i8", "int64_t"),
    "uint8": ("<u1", "uint8_t"),
    "uint16": ("<u2", "uint16_t"),
    "uint32": ("<u4", "uint32_t"),
    "uint64": ("<u8", "uint64_t"),
    "float32": ("<f4", "float"),
    "float64": ("<f8", "double"),
}
_COMPLEX_TO_REAL = {"complex64": "float32", "complex128": "float64"}
_REAL_TO_COMPLEX = {v: k for k, v in _COMPLEX_TO_REAL.items()}

_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]*\Z")
_MAX_NAME = 64
# C99 keywords (ISO/IEC 9899:1999, 6.4.1) plus the stdint / header macro
# names a generated header uses: an array may not be named like them.
_C_WORDS = frozenset("""
    auto break case char const continue default do double else enum extern float for
    goto if inline int long register restrict return short signed sizeof static struct
    switch typedef union unsigned void volatile while _Bool _Complex _Imaginary
    int8_t int16_t int32_t int64_t uint8_t uint16_t uint32_t uint64_t
    """.split())

_FLOAT = re.compile(r"-?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][-+]?[0-9]+)?")
_INT64_MIN, _INT64_MAX = -(2 ** 63), 2 ** 63 - 1
_ARRAY_KEYS = ("name", "type", "complex", "shape", "axes", "values", "bytes", "file", "crc32")
_FORMAT_KEYS = ("name", "version", "byteorder", "layout", "arrays", "metadata")


class VectorFormatError(ValueError):
    """A vector folder that cannot be read: a manifest line that does not
    parse, or an array file that is missing, of the wrong size or damaged.

    The message names the file (and the manifest line) and what is wrong.
    """


# -- records -----------------------------------------------------------------


@dataclass(frozen=True)
class ArrayRecord:
    """One ``array`` record of a manifest: how one array is stored.

    Attributes mirror the manifest fields (see :mod:`tonebank.vectors`).
    """

    #: The array's name (an identifier).
    name: str
    #: Stored value type, e.g. ``"int16"`` or ``"float32"``.
    type: str
    #: True when the values are interleaved ``(re, im)`` pairs.
    complex: bool
    #: Shape without the pair axis; ``()`` for a single value.
    shape: tuple
    #: Axis names (as many as ``shape`` has sizes), or None.
    axes: tuple | None
    #: Number of stored values.
    values: int
    #: Size of the file in bytes.
    nbytes: int
    #: File name inside the folder, ``<name>.bin``.
    file: str
    #: CRC-32 of the file (``zlib.crc32``).
    crc32: int

    @property
    def file_dtype(self) -> np.dtype:
        """The little-endian numpy dtype of the stored values."""
        return np.dtype(_TYPES[self.type][0])

    @property
    def dtype(self) -> np.dtype:
        """The dtype :func:`~tonebank.vectors.read_vectors` returns (native byte order):
        complex64 / complex128 for float pairs, else the stored type."""
        if self.complex and self.type in _REAL_TO_COMPLEX:
            return np.dtype(_REAL_TO_COMPLEX[self.type])
        return np.dtype(self.type)

    @property
    def array_shape(self) -> tuple:
        """The shape :func:`~tonebank.vectors.read_vectors` returns: ``shape``, plus a last
        axis of 2 for integer pairs."""
        if self.complex and self.type not in _REAL_TO_COMPLEX:
            return self.shape + (2,)
        return self.shape

    def manifest_line(self) -> str:
        """The record as it appears in the manifest (no line end)."""
        shape = ",".join(str(n) for n in self.shape) or "-"
        axes = ",".join(self.axes) if self.axes else "-"
        return (f"array name={self.name} type={self.type} complex={int(self.complex)} "
                f"shape={shape} axes={axes} values={self.values} bytes={self.nbytes} "
                f"file={self.file} crc32=0x{self.crc32:08x}")


@dataclass(frozen=True)
class Manifest:
    """A parsed manifest: the metadata and the array records, in file order."""

    #: Metadata, name -> str / int / float (read-only mapping).
    metadata: Mapping
    #: The array records, in file order.
    records: tuple

    def __post_init__(self):
        object.__setattr__(self, "metadata", MappingProxyType(dict(self.metadata)))
        object.__setattr__(self, "records", tuple(self.records))

    def record(self, name: str) -> ArrayRecord:
        """The record of array ``name``; KeyError naming it if absent."""
        for rec in self.records:
            if rec.name == name:
                return rec
        raise KeyError(f"no array named {name!r} in the manifest; it lists "
                       f"{[r.name for r in self.records]}")

    @property
    def names(self) -> tuple:
        """Array names in file order."""
        return tuple(r.name for r in self.records)

    def text(self) -> str:
        """The manifest file's text, as :func:`~tonebank.vectors.write_vectors` writes it."""
        lines = [
            "# tonebank test vectors: raw little-endian row-major files, one per array",
            f"format name={FORMAT_NAME} version={FORMAT_VERSION} byteorder=little "
            f"layout=row-major arrays={len(self.records)} metadata={len(self.metadata)}",
        ]
        for key, value in self.metadata.items():
            kind = "str" if isinstance(value, str) else "int" if isinstance(value, int) else "float"
            lines.append(f"meta name={key} type={kind} value={_meta_text(value)}")
        lines.extend(r.manifest_line() for r in self.records)
        lines.append("end")
        return "\n".join(lines) + "\n"


class VectorSet(Mapping):
    """The arrays of a vector folder, read by :func:`~tonebank.vectors.read_vectors`.

    Made by :func:`~tonebank.vectors.read_vectors`: a read-only mapping
    name -> numpy array in manifest order, with the
    folder's :attr:`metadata`, :attr:`manifest` and :attr:`folder`.  The
    arrays are read-only, in the machine's native byte order.
    """

    def __init__(self, arrays: Mapping, manifest: Manifest, folder: Path | None = None):
        self._arrays = dict(arrays)
        self._manifest = manifest
        self._folder = folder

    @property
    def manifest(self) -> Manifest:
        """The parsed manifest (types, shapes, checksums)."""
        return self._manifest

    @property
    def folder(self) -> Path | None:
        """The folder read, or None."""
        return self._folder

    @property
    def metadata(self) -> Mapping:
        """The folder's metadata (read-only mapping)."""
        return self.manifest.metadata

    def __getitem__(self, name):
        return self._arrays[name]

    def __iter__(self) -> Iterator:
        return iter(self._arrays)

    def __len__(self) -> int:
        return len(self._arrays)

    def __repr__(self) -> str:
        parts = ", ".join(f"{n}: {a.dtype} {a.shape}" for n, a in self._arrays.items())
        return f"VectorSet({parts})"


# -- checks of what is written ------------------------------------------------


def _check_name(name, what: str) -> str:
    if not isinstance(name, str):
        raise TypeError(f"{what} must be a string; got {name!r} ({type(name).__name__})")
    if not _NAME.match(name):
        raise ValueError(f"{what}={name!r} is not allowed; names must match "
                         f"[A-Za-z_][A-Za-z0-9_]* (a C identifier)")
    if len(name) > _MAX_NAME:
        raise ValueError(f"{what}={name!r} is too long ({len(name)} characters); "
                         f"at most {_MAX_NAME} are allowed")
    if name in _C_WORDS:
        raise ValueError(f"{what}={name!r} is not allowed: it is a C keyword or type name")
    if name.startswith("__") or re.match(r"_[A-Z]", name):
        raise ValueError(f"{what}={name!r} is not allowed: names starting with '__' or "
                         f"'_' and a capital letter are reserved in C")
    return name


def _meta_text(value) -> str:
    if isinstance(value, str):
        return value
    if isinstance(value, int):
        return str(value)
    return repr(float(value))


def _check_metadata(metadata) -> dict:
    if metadata is None:
        return {}
    if not isinstance(metadata, Mapping):
        raise TypeError(f"metadata must be a mapping of names to str, int or float; "
                        f"got {type(metadata).__name__}")
    out = {}
    for key, value in metadata.items():
        _check_name(key, "metadata key")
        what = f"metadata[{key!r}]"
        if isinstance(value, (bool, np.bool_)):
            raise TypeError(f"{what}={value!r}: booleans are not allowed; use an int (0 or 1)")
        if isinstance(value, str):
            bad = [c for c in value if not " " <= c <= "~"]
            if bad:
                raise ValueError(f"{what}={value!r} holds {bad[0]!r}: strings must be "
                                 f"printable ASCII (space to '~'), one line")
            if not value:
                raise ValueError(f"{what} is an empty string; manifest values are never empty")
            out[key] = value
        elif isinstance(value, numbers.Integral):
            v = int(value)
            if not _INT64_MIN <= v <= _INT64_MAX:
                raise ValueError(f"{what}={v} does not fit in int64")
            out[key] = v
        elif isinstance(value, numbers.Real):
            v = float(value)
            if not math.isfinite(v):
                raise ValueError(f"{what}={value!r}: floats must be finite")
            out[key] = v
        else:
            raise TypeError(f"{what} must be a str, int or float; got {value!r} "
                            f"({type(value).__name__})")
    return out


def _stored_values(name: str, array, pairs: bool) -> tuple:
    """``(type name, complex flag, logical shape, little-endian value array)``."""
    what = f"arrays[{name!r}]"
    if isinstance(array, np.generic):     # a numpy scalar has an explicit type too
        array = np.asarray(array)
    if not isinstance(array, np.ndarray):
        raise TypeError(f"{what} must be a numpy array; got {type(array).__name__}. "
                        f"Convert it with numpy.asarray(..., dtype=...) so that the stored "
                        f"type is chosen, not guessed")
    kind = array.dtype.name if array.dtype.isnative else array.dtype.newbyteorder("=").name
    if kind in _COMPLEX_TO_REAL:
        if pairs:
            raise ValueError(f"complex_pairs lists {name!r}, which is already complex "
                             f"({kind}); list only integer arrays whose last axis is (re, im)")
        real = _COMPLEX_TO_REAL[kind]
        values = np.empty(array.shape + (2,), dtype=_TYPES[real][0])
        values[..., 0] = array.real
        values[..., 1] = array.imag
        return real, True, array.shape, values
    if kind not in _TYPES:
        allowed = ", ".join(list(_TYPES) + list(_COMPLEX_TO_REAL))
        raise TypeError(f"{what} has dtype {array.dtype}, which cannot be stored; "
                        f"allowed: {allowed}")
    if pairs:
        if kind.startswith("float"):
            raise ValueError(f"complex_pairs lists {name!r} ({kind}); for float pairs pass a "
                             f"complex64 / complex128 array instead")
        if array.ndim == 0 or array.shape[-1] != 2:
            raise ValueError(f"complex_pairs lists {name!r}, whose shape {array.shape} has no "
                             f"last axis of length 2 to hold (re, im)")
        return kind, True, array.shape[:-1], array.astype(_TYPES[kind][0], copy=False)
    return kind, False, array.shape, array.astype(_TYPES[kind][0], copy=False)


def _check_axes(axes, names) -> dict:
    if axes is None:
        return {}
    if not isinstance(axes, Mapping):
        raise TypeError(f"axes must be a mapping of array names to axis names; "
                        f"got {type(axes).__name__}")
    out = {}
    for name, labels in axes.items():
        if name not in names:
            raise ValueError(f"axes names array {name!r}, which is not in arrays "
                             f"({list(names)})")
        if isinstance(labels, str) or not isinstance(labels, Iterable):
            raise TypeError(f"axes[{name!r}] must be a sequence of axis names; got {labels!r}")
        labels = tuple(labels)
        for label in labels:
            _check_name(label, f"axes[{name!r}] entry")
        if len(set(labels)) != len(labels):
            raise ValueError(f"axes[{name!r}]={labels!r} repeats a name")
        out[name] = labels
    return out


# -- writing -----------------------------------------------------------------


def write_vectors(folder, arrays: Mapping, *, metadata: Mapping | None = None,
                  complex_pairs: Iterable = (), axes: Mapping | None = None,
                  c_header: str | None = None, overwrite: bool = False) -> Manifest:
    """Write named arrays as raw little-endian files with a manifest.

    Parameters
    ----------
    folder : str or os.PathLike
        Folder to write into; created (with its parents) if absent.
    arrays : collections.abc.Mapping
        Name -> array, in the order the manifest lists them.  dtypes int8,
        int16, int32, int64, uint8, uint16, uint32, uint64, float32,
        float64, complex64 (stored as float32 pairs) and complex128
        (float64 pairs); any shape, including 0-d and empty.  Names are C
        identifiers (see the module docstring), unique ignoring case.
    metadata : collections.abc.Mapping, optional
        Name -> str, int or float: free-form facts written to the manifest
        (plan, scaling, seed ...).
        Strings are printable ASCII; ints fit in int64; floats are finite.
    complex_pairs : collections.abc.Iterable, optional
        Names of integer arrays whose last axis (length 2) holds
        ``(re, im)``: they are stored as pairs (``complex=1``, shape
        without that axis) and read back with the same shape and dtype.
    axes : collections.abc.Mapping, optional
        Axis names (strings) per array name, e.g. ``{"rx_time": ("symbol", "sample")}``,
        as many as the stored shape has axes (the pair axis not counted);
        they label the checker's report.
    c_header : str, optional
        Also write ``<c_header>.h`` into the folder: for each array
        ``static const <type> <name>[<NAME>_LEN] = {...};`` with
        ``#define`` lines ``<NAME>_LEN`` (values), ``<NAME>_NDIM``,
        ``<NAME>_DIM<i>``, ``<NAME>_COMPLEX`` and ``<NAME>_CRC32``, where
        ``<NAME>`` is the name in capitals.  Integers are written in
        decimal, floats as C99 hexadecimal literals (exact).  The stem is
        an identifier (it also names the include guard).
    overwrite : bool, optional
        Replace an existing manifest in ``folder`` (default False: refuse).
        Files of arrays the new manifest does not list are left in place
        (and ignored by the reader).

    Returns
    -------
    Manifest
        What was written.

    Raises
    ------
    TypeError
        An array that is not a numpy array or has a type that cannot be
        stored; metadata of another type.
    ValueError
        A name, metadata value, ``complex_pairs`` or ``axes`` entry that is
        not allowed; for the C header, a non-finite float or an empty
        array (C has neither exact literals nor zero-length arrays for
        them).
    FileExistsError
        ``folder`` already holds a manifest and ``overwrite`` is False.

    See Also
    --------
    read_vectors, check_vectors

    Notes
    -----
    The array files are written first and the manifest last (through a
    temporary file renamed into place), so a folder whose export was
    interrupted has no manifest claiming files it does not hold.  Cost:
    one pass over the data for the byte-order conversion and one for the
    CRC; the C header formats every value in Python (about a second per
    million values).

    Examples
    --------
    >>> import tempfile
    >>> from tonebank import vectors
    >>> rng = np.random.default_rng(5)
    >>> q15 = rng.integers(-2**15, 2**15, (2, 8, 2)).astype(np.int16)
    >>> folder = tempfile.mkdtemp()
    >>> manifest = vectors.write_vectors(
    ...     folder, {"pilots_q15": q15}, complex_pairs=["pilots_q15"],
    ...     axes={"pilots_q15": ("symbol", "pilot")}, metadata={"scale": "Q15"})
    >>> print(manifest.records[0].manifest_line())  # doctest: +ELLIPSIS
    array name=pilots_q15 type=int16 complex=1 shape=2,8 axes=symbol,pilot values=32 bytes=64 file=pilots_q15.bin crc32=0x...
    """
    folder = Path(os.fspath(folder))
    if not isinstance(arrays, Mapping):
        raise TypeError(f"arrays must be a mapping of names to numpy arrays; "
                        f"got {type(arrays).__name__}")
    if not arrays:
        raise ValueError("arrays is empty; give at least one named array")
    meta = _check_metadata(metadata)
    if isinstance(complex_pairs, str) or not isinstance(complex_pairs, Iterable):
        raise TypeError(f"complex_pairs must be a collection of array names; "
                        f"got {complex_pairs!r}")
    pairs = set(complex_pairs)
    seen = {}
    for name in arrays:
        _check_name(name, "array name")
        folded = name.lower()
        if folded in seen:
            raise ValueError(f"array names {seen[folded]!r} and {name!r} differ only in case; "
                             f"their files would collide on case-insensitive file systems")
        seen[folded] = name
    for name in pairs:
        if name not in arrays:
            raise ValueError(f"complex_pairs names {name!r}, which is not in arrays "
                             f"({list(arrays)})")
    axis_names = _check_axes(axes, arrays)
    if c_header is not None:
        _check_name(c_header, "c_header")
    if not isinstance(overwrite, (bool, np.bool_)):
        raise TypeError(f"overwrite must be True or False; got {overwrite!r}")

    stored = []
    for name, array in arrays.items():
        kind, is_pairs, shape, values = _stored_values(name, array, name in pairs)
        labels = axis_names.get(name)
        if labels is not None and len(labels) != len(shape):
            raise ValueError(f"axes[{name!r}] has {len(labels)} names {labels!r} but the "
                             f"stored shape {shape} has {len(shape)} axes")
        stored.append((name, kind, is_pairs, tuple(int(n) for n in shape), labels,
                       np.ascontiguousarray(values)))

    if c_header is not None:
        for name, kind, _, _, _, values in stored:
            if values.size == 0:
                raise ValueError(f"c_header: arrays[{name!r}] has no values, and C has no "
                                 f"zero-length arrays; leave it out of the header export")
            if kind.startswith("float") and not np.isfinite(values).all():
                raise ValueError(f"c_header: arrays[{name!r}] holds NaN or infinity, which "
                                 f"have no exact C literal; write it without c_header")

    records, blobs = [], []
    for name, kind, is_pairs, shape, labels, values in stored:
        data = values.tobytes(order="C")
        blobs.append(data)
        records.append(ArrayRecord(name=name, type=kind, complex=is_pairs, shape=shape,
                                   axes=labels, values=int(values.size), nbytes=len(data),
                                   file=f"{name}.bin", crc32=zlib.crc32(data)))
    manifest = Manifest(metadata=meta, records=tuple(records))
    # Everything that can fail on the arguments fails before a file is written.
    header = None if c_header is None else _c_header_text(
        c_header, manifest, [s[5] for s in stored])

    manifest_path = folder / MANIFEST_NAME
    if manifest_path.exists() and not overwrite:
        raise FileExistsError(f"{manifest_path} exists; pass overwrite=True to replace "
                              f"the vector set in {folder}")
    folder.mkdir(parents=True, exist_ok=True)
    for rec, data in zip(records, blobs):
        (folder / rec.file).write_bytes(data)
    if header is not None:
        _write_text_atomic(folder / f"{c_header}.h", header)
    _write_text_atomic(manifest_path, manifest.text())
    return manifest


def _write_text_atomic(path: Path, text: str) -> None:
    tmp = path.with_name(path.name + ".tmp")
    with open(tmp, "w", encoding="ascii", newline="\n") as fh:
        fh.write(text)
    os.replace(tmp, path)


def _hex_float(value: float) -> str:
    """A C99 hexadecimal literal of ``value`` (exact), trailing zeros dropped."""
    mantissa, exponent = float.hex(value).split("p")
    if "." in mantissa:
        mantissa = mantissa.rstrip("0").rstrip(".")
    return f"{mantissa}p{exponent}"


def _c_literals(kind: str, values: np.ndarray) -> list:
    flat = values.reshape(-1).tolist()
    if kind in ("float32", "float64"):
        suffix = "f" if kind == "float32" else ""
        return [_hex_float(v) + suffix for v in flat]
    if kind in ("int32", "int64"):
        low = -(2 ** (31 if kind == "int32" else 63))
        # The most negative value has no literal of its own in C (the
        # literal is the positive number, which does not fit): write it
        # as (min + 1) - 1.
        wrap = "INT32_C" if kind == "int32" else "INT64_C"
        return [f"({wrap}({v + 1}) - 1)" if v == low else f"{wrap}({v})" for v in flat]
    if kind in ("uint32", "uint64"):
        wrap = "UINT32_C" if kind == "uint32" else "UINT64_C"
        return [f"{wrap}({v})" for v in flat]
    return [str(v) for v in flat]


def _c_header_text(stem: str, manifest: Manifest, stored: list) -> str:
    guard = f"{stem.upper()}_H"
    macros = {guard}
    lines = [
        f"/* {stem}.h: tonebank test vectors (format {FORMAT_NAME} {FORMAT_VERSION}),",
        " * generated by tonebank.vectors.write_vectors; do not edit.",
        " * Values in row-major order, the last axis fastest; complex arrays are",
        " * interleaved (re, im) pairs.  <NAME>_CRC32 is the CRC-32 (zlib) of the",
        " * little-endian bytes of the values, as in manifest.txt.",
    ]
    for key, value in manifest.metadata.items():
        # Nothing in a comment may end it, open another or form a trigraph.
        text = _meta_text(value).replace("*/", "* /").replace("/*", "/ *").replace("??", "? ?")
        lines.append(f" * {key} = {text}")
    lines += [" */", f"#ifndef {guard}", f"#define {guard}", "", "#include <stdint.h>", ""]
    names = {r.name for r in manifest.records}
    if guard in names:
        raise ValueError(f"c_header={stem!r}: its include guard {guard} is also an array "
                         f"name; choose another stem")
    for rec, values in zip(manifest.records, stored):
        up = rec.name.upper()
        c_type = _TYPES[rec.type][1]
        shape = " x ".join(str(n) for n in rec.shape) or "() (a single value)"
        axes = f" ({' x '.join(rec.axes)})" if rec.axes else ""
        pairs = ", interleaved (re, im) pairs" if rec.complex else ""
        lines.append(f"/* {rec.name}: {rec.type}{pairs}, shape {shape}{axes} */")
        defs = [(f"{up}_LEN", f"{rec.values}u"), (f"{up}_NDIM", str(len(rec.shape)))]
        defs += [(f"{up}_DIM{i}", f"{n}u") for i, n in enumerate(rec.shape)]
        defs += [(f"{up}_COMPLEX", str(int(rec.complex))), (f"{up}_CRC32", f"0x{rec.crc32:08x}u")]
        for macro, value in defs:
            if macro in macros or macro in names:
                raise ValueError(f"c_header: the macro {macro} (from array {rec.name!r}) "
                                 f"collides with another name in the header; rename an array")
            macros.add(macro)
            lines.append(f"#define {macro} {value}")
        literals = _c_literals(rec.type, values)
        per_line = 8 if rec.type.startswith(("float", "int64", "uint64")) else 12
        lines.append(f"static const {c_type} {rec.name}[{up}_LEN] = {{")
        for start in range(0, len(literals), per_line):
            lines.append("    " + ", ".join(literals[start:start + per_line]) + ",")
        lines += ["};", ""]
    lines.append(f"#endif /* {guard} */")
    return "\n".join(lines) + "\n"


# -- reading -----------------------------------------------------------------


def _fields(line: str, keys: tuple, where: str) -> dict:
    tokens = line.split(" ")[1:]
    if len(tokens) != len(keys):
        raise VectorFormatError(f"{where}: expected {len(keys)} fields "
                                f"({' '.join(k + '=...' for k in keys)}), got {len(tokens)}")
    out = {}
    for i, (token, key) in enumerate(zip(tokens, keys)):
        k, sep, v = token.partition("=")
        if k != key or not sep or not v:
            raise VectorFormatError(f"{where}: field {i + 1} must be {key}=<value>, "
                                    f"got {token!r}")
        out[key] = v
    return out


def _count(text: str, key: str, where: str) -> int:
    if not text.isdigit() or (len(text) > 1 and text[0] == "0"):
        raise VectorFormatError(f"{where}: {key}={text!r} is not a non-negative decimal integer")
    return int(text)


def _parse_meta(line: str, where: str) -> tuple:
    match = re.match(r"meta name=(\S+) type=(\S+) value=(.+)\Z", line)
    if not match:
        raise VectorFormatError(f"{where}: expected 'meta name=<key> type=<str|int|float> "
                                f"value=<value>', got {line!r}")
    key, kind, text = match.groups()
    if not _NAME.match(key):
        raise VectorFormatError(f"{where}: metadata name {key!r} is not an identifier")
    if kind == "str":
        if not all(" " <= c <= "~" for c in text):
            raise VectorFormatError(f"{where}: value is not printable ASCII")
        return key, text
    if kind == "int":
        if not re.fullmatch(r"-?[0-9]+", text) or not _INT64_MIN <= int(text) <= _INT64_MAX:
            raise VectorFormatError(f"{where}: {text!r} is not a decimal int64")
        return key, int(text)
    if kind == "float":
        if not _FLOAT.fullmatch(text) or not math.isfinite(float(text)):
            raise VectorFormatError(f"{where}: {text!r} is not a finite decimal float")
        return key, float(text)
    raise VectorFormatError(f"{where}: metadata type {kind!r} is not str, int or float")


def _parse_array(line: str, where: str) -> ArrayRecord:
    f = _fields(line, _ARRAY_KEYS, where)
    name = f["name"]
    if not _NAME.match(name):
        raise VectorFormatError(f"{where}: array name {name!r} is not an identifier")
    if f["type"] not in _TYPES:
        raise VectorFormatError(f"{where}: type={f['type']!r} is not one of {', '.join(_TYPES)}")
    if f["complex"] not in ("0", "1"):
        raise VectorFormatError(f"{where}: complex={f['complex']!r} must be 0 or 1")
    shape = () if f["shape"] == "-" else tuple(
        _count(n, "shape entry", where) for n in f["shape"].split(","))
    if f["axes"] == "-":
        axes = None
    else:
        axes = tuple(f["axes"].split(","))
        if len(axes) != len(shape) or not all(_NAME.match(a) for a in axes):
            raise VectorFormatError(f"{where}: axes={f['axes']!r} must be {len(shape)} "
                                    f"identifiers separated by commas, or -")
    is_pairs = f["complex"] == "1"
    values = _count(f["values"], "values", where)
    nbytes = _count(f["bytes"], "bytes", where)
    expected_values = math.prod(shape) * (2 if is_pairs else 1)
    if values != expected_values:
        raise VectorFormatError(f"{where}: values={values} but shape {f['shape']} "
                                f"{'in pairs ' if is_pairs else ''}holds {expected_values}")
    itemsize = np.dtype(_TYPES[f["type"]][0]).itemsize
    if nbytes != values * itemsize:
        raise VectorFormatError(f"{where}: bytes={nbytes} but {values} {f['type']} values "
                                f"take {values * itemsize}")
    if f["file"] != f"{name}.bin":
        raise VectorFormatError(f"{where}: file={f['file']!r} must be {name + '.bin'!r}")
    if not re.fullmatch(r"0x[0-9a-f]{8}", f["crc32"]):
        raise VectorFormatError(f"{where}: crc32={f['crc32']!r} must be 0x and 8 lowercase "
                                f"hex digits")
    return ArrayRecord(name=name, type=f["type"], complex=is_pairs, shape=shape, axes=axes,
                       values=values, nbytes=nbytes, file=f["file"], crc32=int(f["crc32"], 16))


def _folder_and_manifest(folder) -> tuple:
    folder = Path(os.fspath(folder))
    path = folder / MANIFEST_NAME
    if not path.is_file():
        raise FileNotFoundError(f"{path} does not exist: {folder} is not a vector folder "
                                f"written by tonebank.vectors.write_vectors")
    return folder, path


def read_manifest(folder) -> Manifest:
    """Parse the manifest of a vector folder (the array files are not read).

    Parameters
    ----------
    folder : str or os.PathLike
        A folder written by :func:`~tonebank.vectors.write_vectors`.

    Returns
    -------
    Manifest

    Raises
    ------
    FileNotFoundError
        ``folder`` holds no ``manifest.txt``.
    VectorFormatError
        A line that does not follow the format (the message names the
        file and line number), a format name or version this module does
        not read, counts that do not match, or no ``end`` record.

    See Also
    --------
    read_vectors

    Examples
    --------
    >>> import tempfile
    >>> from tonebank import vectors
    >>> folder = tempfile.mkdtemp()
    >>> _ = vectors.write_vectors(folder, {"llr": np.arange(6, dtype=np.int8)},
    ...                           metadata={"bits_per_symbol": 2})
    >>> m = vectors.read_manifest(folder)
    >>> m.names, dict(m.metadata)
    (('llr',), {'bits_per_symbol': 2})
    """
    folder, path = _folder_and_manifest(folder)
    raw = path.read_bytes()
    try:
        text = raw.decode("ascii")
    except UnicodeDecodeError as exc:
        line = raw[:exc.start].count(b"\n") + 1
        raise VectorFormatError(f"{path} line {line}: not ASCII text") from None
    header = None
    metadata, records, ended = {}, [], False
    for number, line in enumerate(text.split("\n"), start=1):
        where = f"{path} line {number}"
        if line.endswith("\r"):
            line = line[:-1]
        if not line or line.startswith("#"):
            continue
        if ended:
            raise VectorFormatError(f"{where}: {line!r} follows the end record")
        kind = line.split(" ", 1)[0]
        if header is None:
            if kind != "format":
                raise VectorFormatError(f"{where}: the first record must be 'format ...', "
                                        f"got {line!r}")
            f = _fields(line, _FORMAT_KEYS, where)
            if f["name"] != FORMAT_NAME:
                raise VectorFormatError(f"{where}: format name {f['name']!r} is not "
                                        f"{FORMAT_NAME!r}")
            if f["version"] != str(FORMAT_VERSION):
                raise VectorFormatError(f"{where}: format version {f['version']!r}; this "
                                        f"tonebank reads version {FORMAT_VERSION}")
            if f["byteorder"] != "little" or f["layout"] != "row-major":
                raise VectorFormatError(f"{where}: byteorder/layout must be little/row-major")
            header = (_count(f["arrays"], "arrays", where),
                      _count(f["metadata"], "metadata", where))
        elif kind == "meta":
            if records:
                raise VectorFormatError(f"{where}: meta records must come before array records")
            key, value = _parse_meta(line, where)
            if key in metadata:
                raise VectorFormatError(f"{where}: metadata {key!r} is repeated")
            metadata[key] = value
        elif kind == "array":
            rec = _parse_array(line, where)
            if any(r.name.lower() == rec.name.lower() for r in records):
                raise VectorFormatError(f"{where}: array {rec.name!r} is repeated")
            records.append(rec)
        elif line == "end":
            ended = True
        else:
            raise VectorFormatError(f"{where}: unknown record {line!r}; expected meta, "
                                    f"array or end")
    if header is None:
        raise VectorFormatError(f"{path}: no format record")
    if not ended:
        raise VectorFormatError(f"{path}: no end record (the manifest was cut short)")
    if header != (len(records), len(metadata)):
        raise VectorFormatError(f"{path}: the format record announces {header[0]} arrays and "
                                f"{header[1]} metadata entries, the file holds {len(records)} "
                                f"and {len(metadata)}")
    return Manifest(metadata=metadata, records=tuple(records))


def _array_from_bytes(rec: ArrayRecord, data: bytes) -> np.ndarray:
    values = np.frombuffer(data, dtype=rec.file_dtype)
    if rec.complex and rec.type in _REAL_TO_COMPLEX:
        pairs = values.reshape(rec.shape + (2,))
        out = np.empty(rec.shape, dtype=rec.dtype)
        out.real = pairs[..., 0]
        out.imag = pairs[..., 1]
    else:
        out = values.astype(rec.dtype).reshape(rec.array_shape)
    out.flags.writeable = False
    return out


def read_vectors(folder) -> VectorSet:
    """Read a vector folder back: the arrays with their exact shapes and dtypes.

    Parameters
    ----------
    folder : str or os.PathLike
        A folder written by :func:`~tonebank.vectors.write_vectors`.

    Returns
    -------
    VectorSet
        Read-only mapping name -> array (native byte order) in manifest
        order, with ``metadata`` and ``manifest``.

    Raises
    ------
    FileNotFoundError
        ``folder`` holds no ``manifest.txt``.
    VectorFormatError
        A bad manifest line (see :func:`~tonebank.vectors.read_manifest`), or an array file
        that is missing, has a size other than the manifest's ``bytes`` or
        a CRC-32 other than its ``crc32``; the message names the file, the
        manifest's figure and what was found.

    See Also
    --------
    write_vectors, check_vectors

    Notes
    -----
    Every file is read once and its CRC-32 checked (``zlib.crc32``).
    A byte order other than native, given to :func:`~tonebank.vectors.write_vectors`, comes
    back native: the files store values, not the writer's byte order.

    Examples
    --------
    >>> import tempfile
    >>> from tonebank import vectors
    >>> folder = tempfile.mkdtemp()
    >>> grid = np.array([[1 + 2j, -3 - 4j]], dtype=np.complex64)
    >>> _ = vectors.write_vectors(folder, {"grid": grid})
    >>> back = vectors.read_vectors(folder)
    >>> back["grid"]
    array([[ 1.+2.j, -3.-4.j]], dtype=complex64)
    """
    folder, _ = _folder_and_manifest(folder)
    manifest = read_manifest(folder)
    arrays = {}
    for rec in manifest.records:
        path = folder / rec.file
        if not path.is_file():
            raise VectorFormatError(f"{path}: missing (listed in {MANIFEST_NAME} as array "
                                    f"{rec.name!r})")
        data = path.read_bytes()
        if len(data) != rec.nbytes:
            raise VectorFormatError(f"{path}: {len(data)} bytes, but {MANIFEST_NAME} says "
                                    f"{rec.nbytes} ({rec.values} {rec.type} values)")
        crc = zlib.crc32(data)
        if crc != rec.crc32:
            raise VectorFormatError(f"{path}: CRC-32 is 0x{crc:08x}, but {MANIFEST_NAME} says "
                                    f"0x{rec.crc32:08x}: the file is damaged or was changed")
        arrays[rec.name] = _array_from_bytes(rec, data)
    return VectorSet(arrays, manifest, folder)


# -- checking a port ---------------------------------------------------------


@dataclass(frozen=True)
class Mismatch:
    """Where an array of a port first differs from the reference."""

    #: Index of the value in the file (counting stored values, pairs as two).
    value_index: int
    #: Offset of the value in the file, in bytes.
    byte_offset: int
    #: Index in the array's logical shape (the pair axis not counted).
    index: tuple
    #: ``"re"`` or ``"im"`` for pairs, else None.
    part: str | None
    #: The reference value.
    expected: int | float
    #: The port's value.
    got: int | float

    def where(self, record: ArrayRecord) -> str:
        """``name[axis=i, ...].part`` for a report line."""
        labels = record.axes or tuple(f"i{k}" for k in range(len(self.index)))
        inside = ", ".join(f"{a}={i}" for a, i in zip(labels, self.index))
        text = f"{record.name}[{inside}]" if self.index else record.name
        return text + (f".{self.part}" if self.part else "")


@dataclass(frozen=True)
class ArrayCheck:
    """The verdict on one array: ``status`` is ``"ok"``, ``"mismatch"``,
    ``"missing"``, ``"size"`` (file of the wrong size) or ``"unreadable"``."""

    #: The reference record of the array.
    record: ArrayRecord
    #: ``"ok"``, ``"mismatch"``, ``"missing"``, ``"size"`` or ``"unreadable"``.
    status: str
    #: The port file checked.
    path: Path
    #: Size of the port file in bytes (None when missing or unreadable).
    got_bytes: int | None = None
    #: Number of values that differ (0 unless ``status == "mismatch"``).
    mismatches: int = 0
    #: The first differing value (None unless ``status == "mismatch"``).
    first: Mismatch | None = None
    #: Largest absolute difference over the values compared (for floats,
    #: over the values where both are finite); None when there were none
    #: or the file was not compared.
    max_abs_difference: int | float | None = None
    #: Why the file could not be read (``status == "unreadable"``).
    reason: str = ""

    @property
    def ok(self) -> bool:
        """True when the port's file matches the reference."""
        return self.status == "ok"

    def line(self) -> str:
        """One line of the report."""
        rec = self.record
        if self.status == "ok":
            extra = ""
            if self.max_abs_difference:
                extra = f", largest difference {self.max_abs_difference:.3g}"
            return f"{rec.name}: OK ({_plural(rec.values, rec.type + ' value')}{extra})"
        if self.status == "missing":
            return f"{rec.name}: MISSING: {self.path} does not exist"
        if self.status == "size":
            return (f"{rec.name}: WRONG SIZE: expected {rec.nbytes} bytes "
                    f"({_plural(rec.values, rec.type + ' value')}), got {self.got_bytes} "
                    f"bytes in {self.path}")
        if self.status == "unreadable":
            return f"{rec.name}: UNREADABLE: {self.path}: {self.reason}"
        m = self.first
        diff = ""
        if self.max_abs_difference is not None:
            diff = f"; largest difference {self.max_abs_difference!r}"
        return (f"{rec.name}: MISMATCH: {self.mismatches} of {rec.values} values differ; "
                f"first at value {m.value_index} (byte {m.byte_offset}) = {m.where(rec)}: "
                f"expected {m.expected!r}, got {m.got!r}{diff}")


@dataclass(frozen=True)
class CheckResult:
    """The outcome of :func:`~tonebank.vectors.check_vectors`; ``str()`` gives the report."""

    #: Reference folder (None when a VectorSet without folder was given).
    reference: Path | None
    #: Port folder.
    port: Path
    #: One verdict per checked array, in manifest order.
    arrays: tuple
    #: Relative and absolute tolerances used for float arrays.
    rtol: float = 0.0
    atol: float = 0.0

    @property
    def ok(self) -> bool:
        """True when every checked array matches."""
        return all(a.ok for a in self.arrays)

    def __getitem__(self, name: str) -> ArrayCheck:
        for a in self.arrays:
            if a.record.name == name:
                return a
        raise KeyError(f"array {name!r} was not checked; checked: "
                       f"{[a.record.name for a in self.arrays]}")

    def report(self) -> str:
        """The printable report: a summary line, then one line per array."""
        failed = sum(not a.ok for a in self.arrays)
        verdict = ("all match" if not failed else "1 does not match" if failed == 1
                   else f"{failed} do not match")
        tol = ""
        if self.rtol or self.atol:
            tol = f" (floats within atol={self.atol:g} + rtol={self.rtol:g} * |expected|)"
        head = (f"tonebank vector check of {self.port}: "
                f"{_plural(len(self.arrays), 'array')}, {verdict}{tol}")
        return "\n".join([head] + ["  " + a.line() for a in self.arrays])

    def __str__(self) -> str:
        return self.report()


def _plural(count: int, noun: str) -> str:
    return f"{count} {noun}" + ("" if count == 1 else "s")


def _scalar(value):
    return value.item()


def _compare(rec: ArrayRecord, path: Path, got: np.ndarray, expected: np.ndarray,
             rtol: float, atol: float, size: int) -> ArrayCheck:
    if rec.type.startswith("float"):
        both_nan = np.isnan(expected) & np.isnan(got)
        with np.errstate(invalid="ignore", over="ignore"):
            diff = np.abs(got.astype(np.float64) - expected.astype(np.float64))
            close = (got == expected) | both_nan
            if rtol or atol:
                close |= diff <= atol + rtol * np.abs(expected.astype(np.float64))
        finite = np.isfinite(diff)
        largest = float(diff[finite].max()) if finite.any() else None
    else:
        close = got == expected
        if rec.type in ("int64", "uint64"):
            bad = ~close
            d = np.abs(got[bad].astype(object) - expected[bad].astype(object))
            largest = int(d.max()) if d.size else 0
        else:
            largest = int(np.abs(got.astype(np.int64) - expected.astype(np.int64)).max()) \
                if got.size else 0
    wrong = np.flatnonzero(~close)
    if wrong.size == 0:
        return ArrayCheck(rec, "ok", path, got_bytes=size, max_abs_difference=largest)
    k = int(wrong[0])
    if rec.complex:
        element, part = divmod(k, 2)
        part_name = ("re", "im")[part]
    else:
        element, part_name = k, None
    index = tuple(int(i) for i in np.unravel_index(element, rec.shape)) if rec.shape else ()
    first = Mismatch(value_index=k, byte_offset=k * rec.file_dtype.itemsize, index=index,
                     part=part_name, expected=_scalar(expected[k]), got=_scalar(got[k]))
    return ArrayCheck(rec, "mismatch", path, got_bytes=size, mismatches=int(wrong.size),
                      first=first, max_abs_difference=largest)


def check_vectors(reference, port, *, names: Iterable | None = None, rtol: float = 0.0,
                  atol: float = 0.0) -> CheckResult:
    """Compare the raw files a port wrote with the reference vectors.

    Parameters
    ----------
    reference : str, os.PathLike or VectorSet
        The reference vector folder (read and verified with
        :func:`~tonebank.vectors.read_vectors`), or a
        :class:`~tonebank.vectors.VectorSet` already read.
    port : str or os.PathLike
        Folder where the port wrote ``<name>.bin`` for each checked array:
        raw values of the reference's type, little-endian, row-major,
        complex values as ``(re, im)`` pairs; nothing else in the folder
        is read.
    names : collections.abc.Iterable, optional
        Arrays to check (e.g. only the outputs of the stage under test);
        default all arrays of the reference, in manifest order.
    rtol, atol : float, optional
        Tolerances for float arrays: a value matches when it equals the
        reference, both are NaN, or ``|got - expected| <= atol + rtol *
        |expected|``.  Default 0: exact values (``-0.0`` matches ``0.0``).
        Integer arrays are always compared exactly, bit for bit.

    Returns
    -------
    CheckResult
        ``ok`` and one :class:`~tonebank.vectors.ArrayCheck` per array: OK; the number of
        differing values and the first one (its index in the file, byte
        offset, index in the array, re/im part, expected and got values);
        a file of the wrong size (expected and found bytes); a missing or
        unreadable file.  ``str(result)`` is the printable report.

    Raises
    ------
    FileNotFoundError, VectorFormatError
        The *reference* folder is missing or damaged (see
        :func:`~tonebank.vectors.read_vectors`).  Problems with the port's files are never
        raised: they are reported.
    TypeError, ValueError
        ``names`` lists an array the reference does not hold; a tolerance
        that is not a finite non-negative number.

    See Also
    --------
    write_vectors, read_vectors

    Notes
    -----
    Values are compared as stored (the port file is read with the
    reference's little-endian type), so integer equality is equality of
    the bits.  Cost: one read and one element-wise comparison per array.

    Examples
    --------
    >>> import os, tempfile
    >>> from tonebank import vectors
    >>> ref, port = tempfile.mkdtemp(), tempfile.mkdtemp()
    >>> out = np.array([[100, -200], [300, -400]], dtype=np.int16)
    >>> _ = vectors.write_vectors(ref, {"out": out}, axes={"out": ("symbol", "sample")})
    >>> wrong = out.copy()
    >>> wrong[1, 0] = 301
    >>> wrong.astype("<i2").tofile(os.path.join(port, "out.bin"))
    >>> result = vectors.check_vectors(ref, port)
    >>> result.ok
    False
    >>> print(result["out"].line())
    out: MISMATCH: 1 of 4 values differ; first at value 2 (byte 4) = out[symbol=1, sample=0]: expected 300, got 301; largest difference 1
    """
    if isinstance(reference, VectorSet):
        ref = reference
    else:
        ref = read_vectors(reference)
    port = Path(os.fspath(port))
    tolerances = []
    for label, value in (("rtol", rtol), ("atol", atol)):
        if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Real):
            raise TypeError(f"{label} must be a real number; got {value!r}")
        if not math.isfinite(float(value)) or value < 0:
            raise ValueError(f"{label}={value!r} is not allowed; need a finite {label} >= 0")
        tolerances.append(float(value))
    rtol, atol = tolerances
    if names is None:
        chosen = list(ref.manifest.names)
    else:
        if isinstance(names, str) or not isinstance(names, Iterable):
            raise TypeError(f"names must be a collection of array names; got {names!r}")
        chosen = list(names)
        for name in chosen:
            if name not in ref:
                raise ValueError(f"names lists {name!r}, which the reference does not hold; "
                                 f"it holds {list(ref.manifest.names)}")
    checks = []
    for name in chosen:
        rec = ref.manifest.record(name)
        path = port / rec.file
        try:
            if not path.exists():
                checks.append(ArrayCheck(rec, "missing", path))
                continue
            if not path.is_file():
                checks.append(ArrayCheck(rec, "unreadable", path,
                                         reason="not a regular file"))
                continue
            size = path.stat().st_size
            if size != rec.nbytes:
                checks.append(ArrayCheck(rec, "size", path, got_bytes=size))
                continue
            data = path.read_bytes()
        except OSError as exc:
            checks.append(ArrayCheck(rec, "unreadable", path, reason=str(exc)))
            continue
        if len(data) != rec.nbytes:   # changed between stat and read
            checks.append(ArrayCheck(rec, "size", path, got_bytes=len(data)))
            continue
        got = np.frombuffer(data, dtype=rec.file_dtype)
        expected = np.ascontiguousarray(
            _stored_values(name, ref[name], rec.complex and rec.type not in _REAL_TO_COMPLEX)[3]
        ).reshape(-1)
        checks.append(_compare(rec, path, got, expected, rtol, atol, len(data)))
    folder = getattr(ref, "folder", None)
    return CheckResult(reference=folder, port=port, arrays=tuple(checks), rtol=rtol, atol=atol)
