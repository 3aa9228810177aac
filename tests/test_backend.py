"""The kernel seam: selection, reporting and errors.

These checks are about tonebank's own contract (documented in
tonebank._kernel); the values they compare against are the header
(csrc/tonebank.h) and the environment the test creates.
"""

import os
import re
import subprocess
import sys
import threading
from pathlib import Path

import cffi
import pytest

import tonebank
from tonebank import _kernel

ROOT = Path(__file__).resolve().parents[1]


def _run_python(code, **env):
    full_env = {k: v for k, v in os.environ.items()
                if k not in ("TONEBANK_BACKEND", "TONEBANK_REQUIRE_C")}
    full_env.update(env)
    return subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          env=full_env, timeout=120)


def test_backend_info_reports_the_active_backend(backend):
    info = tonebank.backend_info()
    assert info["backend"] == backend
    assert backend in info["reason"]
    for key in ("c_available", "c_unavailable_reason", "fft_sizes", "numpy_version",
                "python_version", "machine"):
        assert key in info
    text = str(info)
    assert "backend" in text and backend in text
    if info["c_available"]:
        assert info["c_unavailable_reason"] is None
        assert re.fullmatch(r"\d+\.\d+\.\d+", info["c_kernel_version"])
        assert "-O" in info["c_flags"] or "/O" in info["c_flags"]
        assert info["c_compiler"]
        assert info["c_simd"] in ("avx2", "portable")
        assert info["c_fft_max_size"] >= 65536


def test_backend_info_is_read_only():
    info = tonebank.backend_info()
    with pytest.raises(TypeError):
        info["backend"] = "x"


def test_use_backend_nests_and_restores():
    with tonebank.use_backend("numpy"):
        assert tonebank.backend_info()["backend"] == "numpy"
        with tonebank.use_backend("auto"):
            expected = "c" if tonebank.backend_info()["c_available"] else "numpy"
            assert tonebank.backend_info()["backend"] == expected
        assert tonebank.backend_info()["backend"] == "numpy"


def test_use_backend_applies_to_the_current_thread_only(backend):
    seen = {}
    with tonebank.use_backend("numpy"):
        t = threading.Thread(target=lambda: seen.setdefault("other", tonebank.backend_info()))
        t.start()
        t.join()
    assert seen["other"]["reason"] == _kernel._default_reason


def test_set_backend_changes_the_default_and_auto_restores_it():
    original = _kernel._default
    try:
        tonebank.set_backend("numpy")
        assert _kernel._default.NAME == "numpy"
        assert "set_backend('numpy')" in _kernel._default_reason
        tonebank.set_backend("auto")
        assert _kernel._default is _kernel._impls.get("c", _kernel._numpy)
    finally:
        _kernel._default = original


@pytest.mark.parametrize("bad", ["fortran", "", None, 3])
def test_bad_backend_names_are_rejected(bad):
    with pytest.raises(ValueError, match="name=.* is not a backend"):
        tonebank.set_backend(bad)
    with pytest.raises(ValueError, match="name=.* is not a backend"):
        with tonebank.use_backend(bad):
            pass


def test_asking_for_c_when_absent_raises(monkeypatch):
    monkeypatch.setattr(_kernel, "_c_impl", None)
    monkeypatch.setattr(_kernel, "_c_missing_reason", "no compiler in this test")
    with pytest.raises(tonebank.BackendUnavailableError, match="no compiler in this test"):
        tonebank.set_backend("c")
    with pytest.raises(tonebank.BackendUnavailableError, match="name='c'"):
        with tonebank.use_backend("c"):
            pass


def test_environment_forces_numpy():
    r = _run_python("import tonebank; i = tonebank.backend_info(); "
                    "print(i['backend'], '|', i['reason'])", TONEBANK_BACKEND="numpy")
    assert r.returncode == 0, r.stderr
    assert r.stdout.startswith("numpy |") and "TONEBANK_BACKEND=numpy" in r.stdout


def test_environment_rejects_unknown_backend():
    r = _run_python("import tonebank", TONEBANK_BACKEND="gpu")
    assert r.returncode != 0
    assert "TONEBANK_BACKEND='gpu' is not a backend" in r.stderr


def test_environment_forcing_c_works_or_fails_loudly():
    r = _run_python("import tonebank; print(tonebank.backend_info()['backend'])",
                    TONEBANK_BACKEND="c")
    if tonebank.backend_info()["c_available"]:
        assert r.returncode == 0 and r.stdout.strip() == "c"
    else:
        assert r.returncode != 0 and "BackendUnavailableError" in r.stderr


def test_header_block_is_a_valid_cdef_and_fully_bound():
    # The public header is the contract: its declarations block must parse
    # as a cffi cdef, and every declared tb_ function must be in the module.
    from tonebank._build_kernel import header_declarations

    decl = header_declarations(ROOT / "csrc" / "tonebank.h")
    cffi.FFI().cdef(decl)
    names = set(re.findall(r"\b(tb_\w+)\s*\(", decl))
    assert {"tb_strerror", "tb_fft_plan_create", "tb_fft_execute_f64"} <= names
    if tonebank.backend_info()["c_available"]:
        from tonebank._kernel._c import lib

        missing = [n for n in names if not hasattr(lib, n)]
        assert not missing
