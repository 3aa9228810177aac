"""Render Sphinx math to MathML at build time (offline, no JavaScript).

The HTML pages of the tonebank docs must display their formulas on
machines that reach package registries only, so nothing may be fetched
when the docs are built or viewed.  This extension registers an HTML math
renderer named ``mathml`` that converts the LaTeX of every ``math`` role
and ``math`` directive to presentation MathML with the pure-Python
``latex2mathml`` package.  Current browsers display MathML natively.

LaTeX that ``latex2mathml`` cannot translate faithfully (an unknown
command, an alignment it does not support) is reported as a Sphinx
warning at the formula's location, so the strict build (``-W``) fails
instead of publishing a wrong formula.

Use it by adding ``"mathml"`` to ``extensions`` (with this folder on
``sys.path``); it sets ``html_math_renderer = "mathml"`` itself.
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET
from html import escape
from pathlib import Path

from docutils import nodes
from sphinx.locale import _
from sphinx.util import logging
from sphinx.util.math import get_node_equation_number

try:
    from latex2mathml.converter import convert as _latex_to_mathml
except ImportError as exc:  # pragma: no cover - depends on the environment
    raise ImportError(
        "the docs render math with the 'latex2mathml' package; install it "
        "(pip install latex2mathml, or the package's 'docs' extra)") from exc

logger = logging.getLogger(__name__)

# latex2mathml leaves a command it does not know as an identifier
# such as <mi>\foo</mi>; a bare '&' (not an entity) means an alignment
# it did not understand.
_UNKNOWN_COMMAND = re.compile(r">\s*(\\[A-Za-z]+)\s*<")
_BARE_AMPERSAND = re.compile(r"&(?![A-Za-z]+;|#[0-9]+;|#x[0-9A-Fa-f]+;)")


def latex_to_mathml(latex: str, *, display: str) -> tuple[str, str | None]:
    """Convert *latex* to a ``<math>`` element.

    Returns ``(markup, problem)``; *problem* is None when the conversion
    is trustworthy, or a short description of what went wrong (the
    markup is then a plain-text fallback that is still valid HTML).
    """
    try:
        markup = _latex_to_mathml(latex, display=display)
    except Exception as exc:  # latex2mathml raises several exception types
        return _fallback(latex, display), f"latex2mathml failed: {type(exc).__name__}: {exc}"
    unknown = _UNKNOWN_COMMAND.search(markup)
    if unknown:
        return _fallback(latex, display), f"unsupported LaTeX command {unknown.group(1)}"
    if _BARE_AMPERSAND.search(markup):
        return _fallback(latex, display), (
            "unsupported alignment ('&' outside a split environment)")
    try:
        ET.fromstring(markup)
    except ET.ParseError as exc:
        return _fallback(latex, display), f"latex2mathml produced invalid MathML ({exc})"
    return markup, None


def _fallback(latex: str, display: str) -> str:
    return (f'<math xmlns="http://www.w3.org/1998/Math/MathML" display="{display}">'
            f"<mtext>{escape(latex)}</mtext></math>")


def _convert(translator, node, latex: str, display: str) -> str:
    markup, problem = latex_to_mathml(latex, display=display)
    if problem:
        logger.warning("cannot render math %r: %s", latex, problem,
                       location=node, type="mathml", subtype="convert")
    return markup


def visit_math_html(self, node: nodes.math) -> None:
    """Inline math: ``:math:`...```."""
    self.body.append(self.starttag(node, "span", "", CLASS="math notranslate"))
    self.body.append(_convert(self, node, node.astext(), "inline"))
    self.body.append("</span>")
    raise nodes.SkipNode


def _block_latex(text: str) -> str:
    """Join the equations of a math block (separated by blank lines).

    Several equations, or one with explicit line breaks, go into one
    ``split`` environment so that ``&`` aligns them as in LaTeX.
    """
    parts = [p.strip() for p in text.split("\n\n") if p.strip()]
    if len(parts) == 1 and r"\\" not in parts[0] and "&" not in parts[0]:
        return parts[0]
    body = r" \\ ".join(parts)
    return r"\begin{split}" + body + r"\end{split}"


def visit_math_block_html(self, node: nodes.math_block) -> None:
    """Display math: the ``.. math::`` directive."""
    self.body.append(self.starttag(node, "div", CLASS="math notranslate"))
    if node["number"]:
        number = get_node_equation_number(self, node)
        self.body.append(f'<span class="eqno">({number})')
        self.add_permalink_ref(node, _("Link to this equation"))
        self.body.append("</span>")
    latex = node.astext() if node.get("no-wrap", node.get("nowrap", False)) \
        else _block_latex(node.astext())
    self.body.append(_convert(self, node, latex, "block"))
    self.body.append("</div>\n")
    raise nodes.SkipNode


_STATIC = Path(__file__).resolve().with_name("mathml_static")


def _configure(app, config) -> None:
    # Be the renderer unless the project explicitly chose another one, and
    # ship the small style sheet that lays out display math and numbers.
    if config.html_math_renderer is None:
        config.html_math_renderer = "mathml"
    if config.html_math_renderer == "mathml":
        config.html_static_path = [*config.html_static_path, str(_STATIC)]
        app.add_css_file("mathml.css")


def setup(app):
    app.add_html_math_renderer(
        "mathml",
        inline_renderers=(visit_math_html, None),
        block_renderers=(visit_math_block_html, None),
    )
    app.connect("config-inited", _configure)
    return {"version": "1.0", "parallel_read_safe": True, "parallel_write_safe": True}
