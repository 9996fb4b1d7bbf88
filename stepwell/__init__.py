"""Stepwell for JupyterLab >= 4 and Notebook 7.

This package carries two things:

* the prebuilt JupyterLab extension (installed under
  ``share/jupyter/labextensions/stepwell``), which runs stepwell cells in the browser;
* an IPython extension with the ``%%stepwell`` cell magic, so that a Python kernel running a
  stepwell cell (``jupyter nbconvert --execute``, papermill, Run All without the extension)
  prints a one-line notice instead of failing on the cell's YAML. Load it with
  ``%load_ext stepwell``; JupyterLab with the extension loads it by itself.
"""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("stepwell")
except PackageNotFoundError:  # imported from a source checkout that was never installed
    __version__ = "0+unknown"


def _jupyter_labextension_paths():
    """Where the prebuilt extension lives, for ``jupyter labextension develop``."""
    return [{"src": "labextension", "dest": "stepwell"}]


def load_ipython_extension(ipython):
    """Registers the ``%%stepwell`` cell magic (``%load_ext stepwell``)."""
    from .magic import register

    register(ipython)


def unload_ipython_extension(ipython):
    """Nothing to undo: the magic holds no state."""
