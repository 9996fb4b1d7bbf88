"""The ``%%stepwell`` cell magic.

A stepwell cell's text is a YAML experiment that Stepwell runs in the browser; a Python kernel
cannot run it. The magic makes such a cell harmless where a kernel meets it: it reads nothing
but the number of lines, prints one line saying what the cell is and how to open it, and never
raises. Its output also carries Stepwell's own output type with no summary, so JupyterLab with
the extension shows the cell's live view (restored from the cell's metadata) in its place.
"""

STEPWELL_MIME = "application/vnd.stepwell.cell+json"


def notice(cell):
    """The one line shown for a stepwell cell whose spec is ``cell``."""
    try:
        lines = sum(1 for line in str(cell).splitlines() if line.strip())
    except Exception:
        lines = 0
    return (
        f"Stepwell experiment ({lines} spec lines): stepped in the browser, not by this kernel. "
        "Open the notebook in JupyterLab 4 or Notebook 7 with the stepwell extension "
        "(pip install stepwell) to step it."
    )


def stepwell(line, cell=None):
    """Cell magic: shows :func:`notice` for the cell; never fails."""
    text = notice(cell if cell is not None else "")
    try:
        from IPython.display import publish_display_data

        publish_display_data({"text/plain": text, STEPWELL_MIME: {"version": 1, "summary": None}})
    except Exception:
        try:
            print(text)
        except Exception:
            pass


def register(ipython):
    """Registers :func:`stepwell` as the cell magic ``%%stepwell`` of ``ipython``."""
    ipython.register_magic_function(stepwell, magic_kind="cell", magic_name="stepwell")
