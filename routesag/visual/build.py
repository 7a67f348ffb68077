"""Build a report folder from a results GeoPackage: profiles, plan overview and index.html."""
from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from routesag.errors import OutputError


@dataclass
class Report:
    folder: Path
    index: Path
    profiles: dict
    overviews: list


def build_report(results_path, folder, all_spans: bool = False) -> Report:
    """Read ``results_path`` (a routesag GeoPackage) and write the report into ``folder``.

    Profiles are drawn for spans with a violation, hotspot or unknown stretch, or for every span with
    ``all_spans``. The GeoPackage is read (and checked) before anything is written.
    """
    from routesag.visual.html import index_html
    from routesag.visual.overview import write_overviews
    from routesag.visual.profiles import write_profiles
    from routesag.visual.results import read_results, spans_of_interest

    results = read_results(results_path)
    folder = _prepare_folder(Path(folder))
    span_ids = list(results["spans"]["span_id"].astype(str)) if all_spans else spans_of_interest(results)
    profiles = write_profiles(results, span_ids, folder)
    overviews = write_overviews(results, folder)
    index = folder / "index.html"
    index.write_text(index_html(results, profiles, overviews), encoding="utf-8")
    return Report(folder, index, profiles, overviews)


def _prepare_folder(folder: Path) -> Path:
    if folder.exists() and not folder.is_dir():
        raise OutputError(f"report folder {folder} is a file; give a folder")
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputError(f"report folder {folder} cannot be made: {exc}") from exc
    return folder
