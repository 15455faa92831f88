"""Many campaigns at once: every campaign file under a folder, certified on all cores.

Method: a campaign file is a TOML file with a ``[characterization]`` table; each one found
under the folder (recursively, in path order) is loaded and certified exactly as
``budget certify`` would (``certification.certify``), in worker processes (one per core
by default), and reduced to one :class:`BatchEntry`: certified value, U, k, unit and the
latest date of its runs. A campaign that cannot be certified is kept as an entry with its
error message; the others go on. The entries are ordered by date (then path), so the
summary is a history: certified values and expanded uncertainties over time.

The work per campaign is independent, so the cost grows linearly with the number of
campaigns and divides by the number of worker processes (``benchmarks/batch.py``).
"""

from __future__ import annotations

import math
import os
import statistics
import tomllib
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any, Iterable

from ._errors import BudgetError, InputError, Location
from ._arguments import keywords_checked
from ._limits import shorten

__all__ = ["BatchEntry", "Batch", "find_campaigns", "certify_folder", "batch_document",
           "batch_rows", "BATCH_COLUMNS"]

_MAX_HEADER = 1 << 20  # bytes of a TOML file read to see whether it is a campaign


@dataclass(frozen=True, slots=True, kw_only=True)
class BatchEntry:
    """One campaign of a batch: its result, or the error that stopped it."""

    path: str
    title: str = ""
    date: str | None = None  # ISO date of the latest run, when the runs are dated
    certified_value: float | None = None
    standard_uncertainty: float | None = None
    coverage_factor: float | None = None
    expanded_uncertainty: float | None = None
    unit: str = ""
    warnings: tuple[str, ...] = ()
    error: str | None = None
    # (role, path) of every file the campaign read (or, when it failed, names): never
    # overwritten by the summary's --csv or --html
    files: tuple[tuple[str, str], ...] = ()


@dataclass(frozen=True, slots=True, kw_only=True)
class Batch:
    folder: str
    entries: tuple[BatchEntry, ...]
    trials: int | None  # None: each campaign's own [settings]
    workers: int

    @property
    def certified(self) -> tuple[BatchEntry, ...]:
        return tuple(e for e in self.entries if e.error is None)

    def __repr__(self) -> str:
        failed = len(self.entries) - len(self.certified)
        return (f"<Batch of {len(self.entries)} campaign(s) under {shorten(self.folder)}: "
                f"{len(self.certified)} certified, {failed} failed>")

    def _repr_html_(self) -> str:
        """The summary table and the chart of certified values of ``budget certify-all``."""
        from ._notebook import batch_html

        return batch_html(self)


def find_campaigns(folder: str | Path) -> list[Path]:
    """Campaign files under ``folder``: TOML files with a [characterization] table, and
    TOML files that cannot be read (their error goes into the summary)."""
    if not isinstance(folder, (str, os.PathLike)):
        raise InputError(f"expected the path of a folder of campaign files, found "
                         f"{type(folder).__name__} {folder!r:.80}",
                         Location(file="<argument>", key="folder"))
    root = Path(folder)
    if not root.is_dir():
        raise InputError(f"expected a folder of campaign files, found "
                         f"{'a file' if root.exists() else 'no such folder'}",
                         Location(file=str(root)))
    return [path for path in sorted(root.rglob("*.toml")) if _is_campaign(path)]


def _is_campaign(path: Path) -> bool:
    """Whether ``path`` is a campaign file, or may be one: a file that cannot be read as
    TOML (a syntax slip, another encoding) is kept, so that ``certify`` names its error
    in the summary instead of the campaign silently going missing from it."""
    try:
        if not path.is_file() or path.stat().st_size > _MAX_HEADER:
            return False
        document = tomllib.loads(path.read_text(encoding="utf-8-sig"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError):
        return True
    return isinstance(document.get("characterization"), dict)


def certify_one(path: str, trials: int | None, seed: int | None) -> BatchEntry:
    """Certify one campaign file (in a worker process); errors become the entry."""
    from ._campaign import load_campaign
    from ._certification import certify

    from ._output import files_of_campaign

    try:
        cert = certify(load_campaign(path), trials=trials, seed=seed)
    except BudgetError as error:
        return BatchEntry(path=path, error=_error_text(error, {"trials": trials, "seed": seed}),
                          files=_named_files(path))
    dates = sorted(cert.run_dates)
    return BatchEntry(path=path, title=cert.campaign.title,
                      files=tuple(files_of_campaign(cert.campaign)) + _named_files(path),
                      date=dates[-1].isoformat() if dates else None,
                      certified_value=cert.certified_value,
                      standard_uncertainty=cert.standard_uncertainty,
                      coverage_factor=cert.coverage_factor,
                      expanded_uncertainty=cert.expanded_uncertainty,
                      unit=cert.campaign.unit, warnings=tuple(cert.warnings))


def _error_text(error: BudgetError, given: dict[str, Any]) -> str:
    """The message; one about a value of ``certify_folder``'s own arguments (named by its
    key alone, without a table or a line) names that argument, not the model file."""
    where = error.location
    if where is not None and where.table is None and where.line is None \
            and given.get(where.key or "") is not None:
        return str(InputError(error.message, Location(file="certify_folder()",
                                                      key=where.key)))
    return str(error)


def _named_files(path: str) -> tuple[tuple[str, str], ...]:
    """The campaign file and every existing file a text of it names beside it (its data,
    even when the campaign failed before reading them)."""
    found = [("campaign", path)]
    try:
        document = tomllib.loads(Path(path).read_text(encoding="utf-8-sig"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError):
        return tuple(found)
    stack: list[Any] = [document]
    while stack:
        item = stack.pop()
        if isinstance(item, dict):
            stack.extend(item.values())
        elif isinstance(item, list):
            stack.extend(item)
        elif isinstance(item, str) and 0 < len(item) < 1000 and "\n" not in item:
            try:
                if (Path(path).parent / item).is_file():
                    found.append(("data", str(Path(path).parent / item)))
            except (OSError, ValueError):
                continue
    return tuple(found)


def _certify_many(paths: list[str], trials: int | None, seed: int | None
                  ) -> list[BatchEntry]:
    return [certify_one(path, trials, seed) for path in paths]


@keywords_checked
def certify_folder(folder: str | Path, *, trials: int | None = 0, seed: int | None = None,
                   workers: int | None = None) -> Batch:
    """Certify every campaign under ``folder`` on ``workers`` processes (default: cores)."""
    from ._arguments import check_seed_argument, check_trials_argument, check_workers

    where = Location(file="certify_folder()")
    trials = None if trials is None else check_trials_argument(trials, replace(where,
                                                                              key="trials"))
    seed = None if seed is None else check_seed_argument(seed, replace(where, key="seed"))
    workers = check_workers(workers, replace(where, key="workers"))
    paths = [str(p) for p in find_campaigns(folder)]
    if not paths:
        raise InputError("expected at least one campaign file (a TOML file with a "
                         "[characterization] table), found none", Location(file=str(folder)))
    workers = max(1, min(workers or os.cpu_count() or 1, len(paths)))
    if workers == 1:
        entries = _certify_many(paths, trials, seed)
    else:
        chunks = [paths[i::workers * 4] for i in range(workers * 4)]
        with ProcessPoolExecutor(max_workers=workers) as pool:
            done = pool.map(_certify_many, [c for c in chunks if c],
                            [trials] * len(chunks), [seed] * len(chunks))
            entries = [entry for chunk in done for entry in chunk]
    entries = [_relative(e, Path(folder)) for e in entries]
    entries.sort(key=lambda e: (e.date is None, e.date or "", e.path))
    return Batch(folder=str(folder), entries=tuple(entries), trials=trials, workers=workers)


def _relative(entry: BatchEntry, folder: Path) -> BatchEntry:
    """The entry with its path relative to the folder (as the summary shows it)."""
    from dataclasses import replace

    try:
        return replace(entry, path=str(Path(entry.path).relative_to(folder)))
    except ValueError:
        return entry


BATCH_COLUMNS = ("date", "campaign", "title", "certified_value", "expanded_uncertainty",
                 "coverage_factor", "standard_uncertainty", "unit", "warnings", "error")


def batch_rows(batch: Batch) -> list[dict[str, Any]]:
    """One flat row per campaign (the CSV export and the JSON ``campaigns``)."""
    from ._arguments import check_instance

    check_instance(batch, Batch, "batch_rows", "batch")
    return [{"date": e.date, "campaign": e.path, "title": e.title,
             "certified_value": e.certified_value,
             "expanded_uncertainty": e.expanded_uncertainty,
             "coverage_factor": e.coverage_factor,
             "standard_uncertainty": e.standard_uncertainty, "unit": e.unit,
             "warnings": len(e.warnings), "error": e.error} for e in batch.entries]


def batch_document(batch: Batch) -> dict[str, Any]:
    """The JSON document of ``budget certify-all``."""
    from ._arguments import check_instance

    check_instance(batch, Batch, "batch_document", "batch")
    from ._document import CAUTION
    from ._provenance import versions

    values = [e.certified_value for e in batch.certified if e.certified_value is not None]
    widths = [e.expanded_uncertainty for e in batch.certified
              if e.expanded_uncertainty is not None]
    return {"folder": batch.folder, "campaigns": batch_rows(batch),
            "summary": {"campaigns": len(batch.entries), "certified": len(values),
                        "failed": len(batch.entries) - len(batch.certified),
                        "value_mean": _mean(values), "value_sd": _sd(values),
                        "value_min": min(values, default=None),
                        "value_max": max(values, default=None),
                        "U_median": statistics.median(widths) if widths else None},
            "provenance": {"versions": versions(), "trials": batch.trials,
                           "workers": batch.workers},
            "caution": CAUTION}


def _mean(values: Iterable[float]) -> float | None:
    items = list(values)
    return math.fsum(items) / len(items) if items else None


def _sd(values: list[float]) -> float | None:
    return statistics.stdev(values) if len(values) > 1 else None


def render_batch(batch: Batch, digits: int = 2) -> str:
    """The terminal summary: one line per campaign, in date order."""
    from ._formatting import format_pair

    lines = [f"{len(batch.entries)} campaign(s) under {batch.folder}: "
             f"{len(batch.certified)} certified, "
             f"{len(batch.entries) - len(batch.certified)} failed", ""]
    header = f"{'date':10s}  {'campaign':40s}  {'certified value':>16s}  {'U':>10s}  k"
    lines += [header, "-" * len(header)]
    for e in batch.entries:
        name = e.path if len(e.path) <= 40 else "…" + e.path[-39:]
        if e.error is not None or e.certified_value is None:
            lines.append(f"{e.date or '':10s}  {name:40s}  failed: {e.error}")
            continue
        value, width = format_pair(e.certified_value, e.expanded_uncertainty or 0.0, digits)
        lines.append(f"{e.date or '':10s}  {name:40s}  {value:>16s}  {width:>10s}  "
                     f"{e.coverage_factor:.2g}  {e.unit}")
    return "\n".join(lines)
