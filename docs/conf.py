"""Sphinx configuration of the firnray documentation.

Build (from the repository root)::

    pip install ".[docs]"
    sphinx-build -W -b html docs docs/_build/html

Before the build this file writes, under ``docs/`` (all ignored by git):

* ``api.rst``: the API reference, one autosummary entry per name in
  ``firnray.__all__``, grouped by layer (the stubs go to ``docs/api/``);
* ``_generated/cli.md``: the ``--help`` text of every subcommand, from the
  parser itself;
* ``_generated/examples/``: what each script in ``examples/`` prints and the
  figure it draws (``--plot``), by running it.

So the reference, the command-line page and the example outputs cannot drift
from the code.
"""

import contextlib
import io
import os
import subprocess
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
GENERATED = os.path.join(HERE, "_generated")
sys.path.insert(0, ROOT)

import firnray  # noqa: E402  (after the path is set)

project = "firnray"
author = "the firnray developers"
copyright = "the firnray developers"
version = release = firnray.__version__

extensions = [
    "sphinx.ext.autodoc",
    "sphinx.ext.autosummary",
    "numpydoc",
    "myst_parser",
]
source_suffix = {".rst": "restructuredtext", ".md": "markdown"}
root_doc = "index"
exclude_patterns = ["_build", "_generated", "images", "Thumbs.db", ".DS_Store"]
html_theme = "alabaster"
html_static_path = []
html_title = f"firnray {release}"

autosummary_generate = True
autodoc_default_options = {"members": True, "inherited-members": False}
autodoc_member_order = "bysource"
numpydoc_show_class_members = False
numpydoc_class_members_toctree = False
numpydoc_xref_param_type = False
numpydoc_validation_checks = set()
myst_heading_anchors = 3
myst_enable_extensions = ["dollarmath"]
suppress_warnings = []

# ----------------------------------------------------------------------------- API page

LAYERS = (
    ("firnray.medium", "Medium: index profiles, ice temperature, attenuation, reflectors"),
    ("firnray.rays", "Rays: finding every ray, results"),
    ("firnray.signal", "Signal: Fresnel factors, path loss"),
    ("firnray.studies", "Studies: shadow zones, D/R delays, tables, stations, vertex and "
                        "profile fits"),
    ("firnray", "Errors, warnings and the version"),
)


def _layer(name):
    obj = getattr(firnray, name)
    module = getattr(obj, "__module__", None) or "firnray"
    if not isinstance(obj, type) and not callable(obj):
        module = _defining_module(name)
    for prefix, _ in LAYERS:
        if module == prefix or module.startswith(prefix + "."):
            return prefix
    return "firnray"


def _defining_module(name):
    """Module that ``firnray/__init__.py`` imports a plain value (not a class or
    function) from, read from the import statements."""
    import ast
    with open(os.path.join(ROOT, "firnray", "__init__.py"), encoding="utf-8") as fh:
        tree = ast.parse(fh.read())
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and any(a.name == name for a in node.names):
            return node.module or "firnray"
    return "firnray"


def write_api_page():
    names = [n for n in firnray.__all__ if n != "__version__"]
    groups = {prefix: [] for prefix, _ in LAYERS}
    for name in names:
        groups[_layer(name)].append(name)
    lines = ["API reference", "=============", "",
             ".. This page is written by docs/conf.py from firnray.__all__ at every build; do not edit it.", "",
             "Everything below is importable from the top level (``firnray.NAME``). "
             "Units are given in [brackets] in each docstring.", "",
             ".. currentmodule:: firnray", ""]
    for prefix, title in LAYERS:
        members = sorted(groups[prefix], key=str.lower)
        if not members:
            continue
        lines += [title, "-" * len(title), "", ".. autosummary::", "   :toctree: api", ""]
        lines += [f"   {m}" for m in members]
        lines.append("")
    lines += ["Figures (``firnray.faces.plots``)", "---------------------------------", "",
              ".. automodule:: firnray.faces.plots", "   :members:", ""]
    _write(os.path.join(HERE, "api.rst"), "\n".join(lines))


# ----------------------------------------------------------------------------- CLI page

def write_cli_page():
    os.environ["COLUMNS"] = "88"      # argparse wraps to the terminal width: fix it
    from firnray.faces import cli
    parser = cli.build_parser()
    sub = next(a for a in parser._actions if a.__class__.__name__ == "_SubParsersAction")
    out = ["```text", parser.format_help().rstrip(), "```", ""]
    for name, p in sub.choices.items():
        out += [f"## firnray {name}", "", "```text", p.format_help().rstrip(), "```", ""]
    _write(os.path.join(GENERATED, "cli.md"), "\n".join(out))


# ----------------------------------------------------------------------------- examples

EXAMPLES = ("second_pulse_delay", "best_antenna_depth", "warm_ice_cost", "vertex_consistency")


def run_examples():
    folder = os.path.join(GENERATED, "examples")
    os.makedirs(folder, exist_ok=True)
    env = dict(os.environ, MPLBACKEND="Agg",        # this checkout's firnray, no GUI
               PYTHONPATH=os.pathsep.join(filter(None, [ROOT, os.environ.get("PYTHONPATH")])))
    for name in EXAMPLES:
        png = os.path.join(folder, f"{name}.png")
        done = subprocess.run([sys.executable, os.path.join(ROOT, "examples", f"{name}.py"),
                               "--plot", png], cwd=ROOT, env=env, capture_output=True,
                              text=True, check=False)
        if done.returncode != 0:
            raise RuntimeError(f"examples/{name}.py failed while building the docs:\n"
                               f"{done.stderr}")
        _write(os.path.join(folder, f"{name}.txt"), done.stdout)


def _write(path, text):
    """Write only when the text changed (keeps Sphinx's incremental builds incremental)."""
    os.makedirs(os.path.dirname(path), exist_ok=True)
    try:
        with open(path, encoding="utf-8") as fh:
            if fh.read() == text:
                return
    except FileNotFoundError:
        pass
    with open(path, "w", encoding="utf-8") as fh:
        fh.write(text)


with contextlib.redirect_stdout(io.StringIO()):
    write_api_page()
    write_cli_page()
    run_examples()
