"""Sphinx configuration of librate's documentation (``make docs``: offline, warnings are errors).

Extensions: autodoc + autosummary (the API reference from the code), numpydoc (the docstrings'
Parameters/Returns/Raises/Examples/References sections), myst-parser (the user manual pages
are Markdown, moved from the README as written), sphinx-gallery (examples/plot_*.py run and
their figures shown), and our own ``_ext/librate_docs.py`` (the CLI reference from the
argparse parsers, the scenario format from the schema, the cautions).
"""

import os
import sys
from pathlib import Path

DOCS = Path(__file__).resolve().parent
ROOT = DOCS.parent
sys.path.insert(0, str(DOCS / "_ext"))
sys.path.insert(0, str(ROOT))
os.environ.setdefault("MPLBACKEND", "Agg")

project = "librate"
author = "the librate developers"
copyright = "the librate developers"
from cr3bp import __version__ as release  # noqa: E402

version = release

extensions = [
    "sphinx.ext.autodoc",
    "sphinx.ext.autosummary",
    "sphinx.ext.mathjax",
    "numpydoc",
    "myst_parser",
    "sphinx_gallery.gen_gallery",
    "librate_docs",
]

source_suffix = {".rst": "restructuredtext", ".md": "markdown"}
exclude_patterns = ["_build", "sync_readme.py", "gallery/*.ipynb", "gallery/*.py", "gallery/*.zip",
                    "gallery/*.md5", "gallery/*.json"]
root_doc = "index"

# --- the API reference ---------------------------------------------------------------------
autosummary_generate = True
# autosummary writes a stub per documented name but never removes one: a name that moved would
# leave a stale stub behind, outside every toctree (a -W failure); start from an empty folder
import shutil  # noqa: E402
shutil.rmtree(DOCS / "generated", ignore_errors=True)
autosummary_imported_members = False
autodoc_default_options = {"members": True, "show-inheritance": False}
autodoc_typehints = "none"
numpydoc_show_class_members = False
numpydoc_class_members_toctree = False
numpydoc_xref_param_type = False
numpydoc_validation_checks = set()

# --- Markdown pages (moved from the README) -----------------------------------------------------
myst_enable_extensions = ["dollarmath"]
myst_heading_anchors = 3
suppress_warnings = ["myst.header"]      # the manual pages keep the README's heading depths

# --- gallery: examples/plot_*.py are run and their figures shown ---------------------------------
sphinx_gallery_conf = {
    "examples_dirs": str(ROOT / "examples"),
    "gallery_dirs": str(DOCS / "gallery"),
    "filename_pattern": r"/plot_",
    "ignore_pattern": r"__init__\.py",
    "download_all_examples": False,
    "remove_config_comments": True,
    "within_subsection_order": "FileNameSortKey",
    "show_memory": False,
    "show_signature": False,
    "write_computation_times": False,
    # run every example again even when unchanged (tests/test_docs.py sets this)
    "run_stale_examples": bool(os.environ.get("LIBRATE_DOCS_RERUN")),
}

# --- HTML -----------------------------------------------------------------------------------
html_theme = "pydata_sphinx_theme"
html_title = f"librate {release}"
html_theme_options = {
    "navigation_with_keys": False,
    "show_prev_next": False,
    "footer_start": ["copyright"],
    "footer_end": [],
}
html_static_path = []
html_show_sourcelink = False
html_last_updated_fmt = None      # no date: the site is the same from run to run
