"""The interactive report: one self-contained ``report.html`` per solved study.

The page embeds the whole front as JSON and draws it with plotly.js (inlined, so it works offline
and makes no network request): the Pareto front coloured by a chosen quantity, the cross-section
and strain profile of the selected candidate, a per-layer table, a parallel-coordinates view of the
decision variables and a sortable table of all candidates, under the study's inputs, the search
summary and the cautions. The page is ``templates/report.html`` with ``static/report.css``,
``static/report_draw.js`` (one candidate's drawings) and ``static/report.js`` (the views over the
front); its data goes in once, as JSON (:func:`templating.embed_json`).

Public API
----------
``load_front(folder_or_file) -> dict``       read and check ``front.json`` (InputError on bad input)
``build_report_html(front) -> str``          the page as text (nothing written)
``output_files(front) -> dict[str, str]``    every report and sheet file, relative path -> text
``write_report(front, out_dir) -> Path``     ``out_dir/report.html``
``write_all(front, out_dir) -> list[Path]``  report and handoff sheets written into ``out_dir``
"""
from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path
from typing import Any

from strainline.optimizer.outputs.diagnosis import diagnosis
from strainline.optimizer.outputs.fileio import write_atomic
from strainline.optimizer.outputs.formatting import (  # noqa: F401 - re-exported for callers
    CAUTION,
    STRAIN_CONVENTION,
    cautions,
    figure,
    fmt,
    study_name,
)
from strainline.optimizer.outputs.frontcheck import check_front, load_front, try_catalog  # noqa: F401
from strainline.optimizer.outputs.pagedata import (  # noqa: F401 - re-exported for callers
    decision_table,
    kv_tree,
    page_data,
    search_summary,
    strain_limits,
)
from strainline.optimizer.outputs.stack import layer_heights, reference_indices, signal_index  # noqa: F401
from strainline.optimizer.outputs.templating import embed_json, inline_script, inline_style, render, static_text


def build_report_html(front: Mapping[str, Any], catalog: Any | None = None, plotly_js: str | None = None) -> str:
    """The report page as one self-contained HTML string.

    Parameters
    ----------
    front : mapping
        A front as in ``front.json`` (checked with :func:`check_front`).
    catalog : Catalog, optional
        Used to name material families; ``load_catalog()`` when None (families are guessed from the
        material names if the catalog cannot be loaded).
    plotly_js : str, optional
        The plotly.js bundle to inline (default: the one shipped with the installed plotly).
    """
    front = check_front(front)
    if catalog is None:
        catalog = try_catalog(front)
    if plotly_js is None:
        from plotly.offline import get_plotlyjs

        plotly_js = get_plotlyjs()
    from strainline.optimizer import __version__

    version = str(front.get("version") or __version__)
    study = front.get("study")
    return render(
        "report.html",
        title=f"strainline report: {study_name(front)}",
        css=inline_style(static_text("report.css")),
        plotly_js=inline_script(plotly_js),
        draw_js=inline_script(static_text("report_draw.js")),
        app_js=inline_script(static_text("report.js")),
        cautions=cautions(front),
        convention=STRAIN_CONVENTION,
        search=kv_tree(search_summary(front, version)),
        study=kv_tree(study if study is not None else ""),
        data=embed_json(page_data(front, catalog)),
        diagnosis=diagnosis(front),
    )


def output_files(front: Mapping[str, Any], catalog: Any | None = None) -> dict[str, str]:
    """Every file of the report and the sheets, built in memory: ``{relative path: text}``.

    ``report.html`` and ``handoff/<id>.html``, ``handoff/<id>.csv``, ``handoff/index.html``.
    Nothing is written; a failure here leaves every file on disk as it was.
    """
    from strainline.optimizer.outputs.sheets import build_handoff

    front = check_front(front)
    if catalog is None:
        catalog = try_catalog(front)
    files = {"report.html": build_report_html(front, catalog)}
    files.update({f"handoff/{name}": text for name, text in build_handoff(front, catalog).items()})
    return files


def write_files(files: Mapping[str, str], out_dir: str | Path) -> list[Path]:
    """Write ``{relative path: text}`` into ``out_dir`` (each file atomically); return the paths."""
    out_dir = Path(out_dir)
    return [write_atomic(out_dir / name, text) for name, text in files.items()]


def write_report(front: Mapping[str, Any], out_dir: str | Path, catalog: Any | None = None) -> Path:
    """Write ``out_dir/report.html`` and return its path."""
    return write_atomic(Path(out_dir) / "report.html", build_report_html(front, catalog))


def write_all(front: Mapping[str, Any], out_dir: str | Path, catalog: Any | None = None) -> list[Path]:
    """Write ``report.html`` and ``handoff/`` for ``front`` into ``out_dir``; return the paths written.

    Everything is built in memory first (:func:`output_files`), so a failure while building writes
    nothing. The folder is taken as given: replacing a previous output set as a whole (stale sheets
    dropped) is the caller's output-folder transaction.
    """
    return write_files(output_files(front, catalog), out_dir)


__all__ = ["load_front", "check_front", "build_report_html", "output_files", "write_files", "write_report",
           "write_all", "CAUTION"]
