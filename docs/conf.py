"""Sphinx configuration of the tonebank documentation.

Built by ``make docs`` with warnings as errors and nitpicky references::

    python -m sphinx -q -W --keep-going -n -b html    docs docs/_build/html
    python -m sphinx -q -W --keep-going -n -b doctest docs docs/_build/doctest

The build is offline: math is rendered to MathML at build time by the
local extension ``_ext/mathml.py`` (no MathJax, nothing fetched when the
pages are viewed), and intersphinx is off unless
``TONEBANK_DOCS_INTERSPHINX=1`` is set on a machine that can reach the
Python, numpy and scipy inventories.
"""

from __future__ import annotations

import doctest
import os
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE / "_ext"))

# The docs document the *installed* package (make docs installs it into
# .venv with its compiled kernel); src/ is deliberately not put on the path.
import tonebank  # noqa: E402

# -- Project -----------------------------------------------------------------

project = "tonebank"
author = "The tonebank developers"
copyright = "the tonebank developers"
release = tonebank.__version__
version = ".".join(release.split(".")[:2])

# -- General -----------------------------------------------------------------

extensions = [
    "sphinx.ext.autodoc",
    "sphinx.ext.autosummary",
    "sphinx.ext.napoleon",
    "sphinx.ext.doctest",
    "mathml",
    # Guide figures are drawn from the library at build time, so they
    # cannot drift from the code (Agg backend, no display needed).
    "matplotlib.sphinxext.plot_directive",
]

plot_include_source = True
plot_html_show_source_link = False
plot_html_show_formats = False
plot_formats = [("png", 90)]
plot_rcparams = {"figure.figsize": (6.4, 3.6)}

INTERSPHINX = os.environ.get("TONEBANK_DOCS_INTERSPHINX", "") == "1"
if INTERSPHINX:
    extensions.append("sphinx.ext.intersphinx")
    intersphinx_mapping = {
        "python": ("https://docs.python.org/3", None),
        "numpy": ("https://numpy.org/doc/stable", None),
        "scipy": ("https://docs.scipy.org/doc/scipy", None),
    }

templates_path = ["_templates"]
exclude_patterns = ["_build", "_templates", "_ext", "Thumbs.db", ".DS_Store"]
root_doc = "index"
default_role = "code"
nitpicky = True
# Displayed equations are numbered only where they have a :label:.
math_number_all = False

# -- autodoc / autosummary / napoleon ----------------------------------------

autosummary_generate = True
autosummary_generate_overwrite = True
autosummary_imported_members = False
autodoc_default_options = {
    "members": True,
    "undoc-members": False,
    "private-members": False,
    "special-members": False,
    "inherited-members": False,
    "show-inheritance": True,
}
autodoc_member_order = "bysource"
autodoc_typehints = "signature"
autodoc_preserve_defaults = True

napoleon_google_docstring = False
napoleon_numpy_docstring = True
napoleon_use_rtype = False
napoleon_use_ivar = True
napoleon_preprocess_types = True
napoleon_type_aliases = {
    "array_like": ":term:`array_like`",
    "ndarray": "numpy.ndarray",
}

# -- Nitpicky references -----------------------------------------------------
# Only names from outside the project are ignored here (the standard
# library, numpy, scipy, cffi), because intersphinx is off by default and
# cannot resolve them.  A broken reference to a tonebank object must keep
# failing the build: never add a "tonebank" pattern to these lists.

nitpick_ignore_regex = [
    (r"py:.*", r"(numpy|np|scipy|cffi|collections|contextlib|contextvars|decimal"
               r"|threading|typing|os|pathlib|warnings|argparse|abc)(\..+)?"),
]

# -- Doctests ----------------------------------------------------------------

# Examples that change the process-wide backend (set_backend) must not
# leak into the next group: the cleanup restores the default in force
# when the group started.
doctest_global_setup = """
import numpy as np
import tonebank
C_AVAILABLE = tonebank.backend_info()["c_available"]
_DOCTEST_BACKEND = tonebank.backend_info()["backend"]
"""
doctest_global_cleanup = """
tonebank.set_backend(_DOCTEST_BACKEND)
"""
doctest_default_flags = (doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE
                         | doctest.DONT_ACCEPT_TRUE_FOR_1)

# -- HTML --------------------------------------------------------------------

html_theme = "alabaster"
html_title = f"tonebank {release}"
html_static_path = []
html_theme_options = {
    "description": "Multicarrier modem prototyping with a portable C kernel",
    "fixed_sidebar": False,
    "show_powered_by": False,
}
html_show_sourcelink = False
html_math_renderer = "mathml"
