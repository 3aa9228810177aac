"""Build script: compiles the C kernel through cffi, falling back gracefully.

All metadata lives in pyproject.toml; this file only exists because the
kernel is compiled by cffi's setuptools hook (``cffi_modules``).

If the kernel cannot be compiled (no compiler, unsupported platform, a
compiler error) the installation still succeeds, prints one loud warning
and leaves a note that :mod:`tonebank._kernel` reports at import; the
package then runs on its numpy fallback.  Set ``TONEBANK_REQUIRE_C=1`` to
make such a failure fail the build instead (``make test`` and CI do).
"""

import os
import sys
from pathlib import Path

from setuptools import setup
from setuptools.command.build_ext import build_ext

FAILURE_NOTE = Path("tonebank") / "_kernel" / "_build_failure.txt"


def _require_c() -> bool:
    return os.environ.get("TONEBANK_REQUIRE_C", "") == "1"


class OptionalKernelBuildExt(build_ext):
    """build_ext that tolerates a failed kernel build unless it is required."""

    def run(self):
        self._clear_note()
        try:
            super().run()
        except Exception as exc:  # compiler missing, compile error, ...
            self._fall_back(exc)

    def build_extension(self, ext):
        try:
            super().build_extension(ext)
        except Exception as exc:
            self._fall_back(exc)

    def _note_path(self) -> Path:
        base = Path("src") if self.inplace else Path(self.build_lib)
        return base / FAILURE_NOTE

    def _clear_note(self):
        path = self._note_path()
        if path.exists():
            path.unlink()

    def _fall_back(self, exc):
        if _require_c():
            raise
        reason = f"{type(exc).__name__}: {exc}".strip()
        bar = "!" * 72
        sys.stderr.write(
            f"\n{bar}\nWARNING: the tonebank C kernel could not be built; the package "
            f"will run on its numpy fallback (same numbers, slower).\nReason: {reason}\n"
            f"Set TONEBANK_REQUIRE_C=1 to make this an error.\n{bar}\n\n"
        )
        path = self._note_path()
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(reason + "\n", encoding="utf-8")


setup(
    cffi_modules=["src/tonebank/_build_kernel.py:make_builder"],
    cmdclass={"build_ext": OptionalKernelBuildExt},
)
