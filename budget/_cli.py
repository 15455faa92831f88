"""The ``budget`` command: a thin shell over the Python API.

Exit status: 0 success; 1 a model or input error (one ``error:`` line naming the file and
where in it, no traceback); 2 a bad command line (click's usage errors); 3 with
``--strict``, when there is any warning (nothing is printed on standard output and no
file is written). Warnings go to standard error as ``warning:`` lines. The engine is
imported inside the commands, so
``budget --help`` starts without loading sympy, scipy, pint or pandas.
"""

from __future__ import annotations

import errno
import math
import os
import sys
import time
from dataclasses import replace
from pathlib import Path
from typing import Any, Callable

import click

from . import __version__
from ._limits import MAX_TRIALS

__all__ = ["main"]

class _Finite(click.ParamType):  # type: ignore[type-arg]
    """A finite number in [low, high]: 'nan' and 'inf' are a bad command line (exit 2)."""

    name = "number"

    def __init__(self, low: float, high: float, what: str) -> None:
        self.low, self.high, self.what = low, high, what

    def convert(self, value: Any, param: click.Parameter | None,
                ctx: click.Context | None) -> float:
        try:
            number = float(value)
        except (TypeError, ValueError):
            self.fail(f"expected {self.what}, found {value!r}", param, ctx)
        if not (math.isfinite(number) and self.low <= number <= self.high):
            self.fail(f"expected {self.what}, found {value!r}", param, ctx)
        return number


_COVERAGE = _Finite(1e-6, 1.0 - 1e-9, "a coverage probability in [1e-6, 1 - 1e-9]")
_TARGET = _Finite(5e-324, 1.7976931348623157e308, "a positive finite number")


_FLAG_HINTS = {"paths outside the folder are allowed": "--allow-outside-folder"}


def _fail(error: Exception) -> None:
    text = str(error)
    # the library names no command-line flag; the command adds the one that applies
    for phrase, flag in _FLAG_HINTS.items():
        text = text.replace(phrase, f"{phrase}: {flag}")
    _err(f"error: {_safe(text)}")
    sys.exit(1)


# The engine names a value it was given as an argument by its key alone, without a table
# or a line ("model.toml: trials:", "certify_folder(): trials:"); given on the command
# line, the value is the option's, and the message names the option.
_OPTIONS = {"trials": "--trials", "coverage": "--coverage", "seed": "--seed",
            "digits": "--digits", "reported_interval": "--reported-interval"}


def _option_error(error: Any, given: dict[str, Any]) -> None:
    """Raise a bad value of an option (status 2) when ``error`` is about a value that
    was ``given`` on the command line; otherwise do nothing."""
    where = error.location
    if where is None or where.table is not None or where.line is not None:
        return
    if where.key in _OPTIONS and given.get(where.key) is not None:
        raise click.BadParameter(error.message, param_hint=f"'{_OPTIONS[where.key]}'")


def _err(text: str) -> None:
    """A line on standard error, in a spelling its encoding can write."""
    from ._console import for_stream

    click.echo(for_stream(text, sys.stderr), err=True)


def _warn(warnings: Any) -> None:
    if _quiet():
        return
    for line in warnings:
        _err(f"warning: {_safe(str(line))}")


def _quiet() -> bool:
    context = click.get_current_context(silent=True)
    return bool(context and context.meta.get("budget.quiet"))


def _set_quiet(ctx: click.Context, _: click.Parameter, value: bool) -> None:
    if value:
        ctx.meta["budget.quiet"] = True


_QUIET = click.option("-q", "--quiet", is_flag=True, expose_value=False, is_eager=True,
                      callback=_set_quiet,
                      help="Print nothing but errors and asked-for JSON (warnings still "
                           "go into the JSON and the reports; --strict still counts them).")


def _read_model(model_file: str) -> Any:
    """The model of MODEL_FILE, or of standard input when it is '-'."""
    from ._model import load_model, parse_model

    if model_file != "-":
        return load_model(model_file)
    from ._errors import InputError, Location
    from ._limits import MAX_FILE_BYTES

    stream: Any = getattr(sys.stdin, "buffer", sys.stdin)  # the bytes under the text
    data = stream.read(MAX_FILE_BYTES + 1)
    if len(data) > MAX_FILE_BYTES:
        raise InputError(f"expected a model of at most {MAX_FILE_BYTES // 2 ** 20} MiB, "
                         "found more", Location(file="<stdin>"))
    return parse_model(data, name="<stdin>")


_SUFFIXES = {".csv": "--csv", ".xlsx": "--xlsx", ".html": "--html", ".htm": "--html"}


def _check_suffixes(html: str | None = None, csv: str | None = None,
                    xlsx: str | None = None) -> None:
    """Refuse a workbook named as text or text named as a workbook (--xlsx b.csv, --csv
    b.xlsx: a spreadsheet opens the one as text, the other not at all); other suffixes
    are the user's choice."""
    for option, name in (("--html", html), ("--csv", csv), ("--xlsx", xlsx)):
        suffix = os.path.splitext(name or "")[1]
        owner = _SUFFIXES.get(suffix.lower())
        if name and owner not in (None, option) and "--xlsx" in (option, owner):
            raise click.UsageError(f"{option} writes {_KINDS[option]}: expected a file name "
                                   f"without the suffix {suffix} of {owner}, found {name!r}")


_KINDS = {"--html": "an HTML page", "--csv": "a CSV table", "--xlsx": "an .xlsx workbook"}


def _check_outputs(*paths: str | None, protect: Any = ()) -> None:
    """Refuse impossible output targets (output.check_target): before the work starts,
    and with the files of the run as ``protect`` once they are known."""
    from pathlib import Path

    from ._errors import InputError, Location
    from ._output import check_target, same_target

    named = [Path(path) for path in paths if path]
    for k, path in enumerate(named):
        if any(same_target(path, other) for other in named[:k]):
            # the second output would silently replace the first
            raise InputError("expected a different file for each output (--html, --csv, "
                             "--xlsx), found this file named twice", Location(file=str(path)))
        check_target(path, protect)


def _safe(text: str) -> str:
    """One line for the terminal: control characters escaped (limits.terminal_text)."""
    from ._limits import terminal_text

    return terminal_text(text)


def _one_shot() -> None:
    """The cyclic garbage collector off until the command ends: it reads, evaluates and
    writes one model, making millions of small objects for a model of 10⁵ inputs and
    hardly any reference cycles, and the collector would traverse them again and again;
    reference counting still frees everything (see budget/_gcpause.py)."""
    import gc

    if gc.isenabled():
        gc.disable()
        click.get_current_context().call_on_close(gc.enable)


# Set by ``console`` (the ``budget`` process itself, not a test's runner): a command that
# made a large model keeps it (``_keep``), and the process ends without freeing its
# millions of objects one by one (0.4 s of a 10⁴-input run here, more for 10⁵).
_LEAVING = False
_kept: list[Any] = []


def _keep(*objects: Any) -> None:
    """Hold the command's model and result until the process ends (``console``)."""
    if _LEAVING:
        _kept.extend(objects)


def console() -> None:
    """The ``budget`` command. A command that succeeded and kept its objects ends the
    process at once, its output flushed (``os._exit``: nothing left to write, every file
    closed by then, no worker alive); any other end, an error, or output that cannot be
    flushed, is left to Python's own exit."""
    global _LEAVING
    _LEAVING = True
    try:
        main(prog_name="budget")
    except SystemExit as done:
        if _kept and done.code in (None, 0):
            try:
                sys.stdout.flush()
                sys.stderr.flush()
            except (OSError, ValueError):
                raise done from None
            os._exit(0)
        raise


def _out(text: str | list[str], *, data: bool = False) -> None:
    """Standard output, or an error when it is closed (the result would be lost).
    ``data``: JSON text, possibly in parts (a document may be a hundred megabytes)."""
    if sys.stdout is None or getattr(sys.stdout, "closed", False):
        click.echo("error: standard output is closed; the result could not be written",
                   err=True)
        sys.exit(1)
    parts = text if isinstance(text, list) else [text]
    if _quiet() and not data:
        return
    if data and all(part.isascii() for part in parts):
        # JSON text is ASCII with every control character escaped but DEL (which only
        # a string can hold): written as it is, part by part
        for part in parts:
            sys.stdout.write(part.replace("\x7f", "\\u007f") if "\x7f" in part else part)
        sys.stdout.write("\n")
        sys.stdout.flush()
        return
    text = "".join(parts)
    from ._console import for_stream
    from ._limits import terminal_text

    click.echo(for_stream(terminal_text(text, keep="\n"), sys.stdout))


class _Group(click.Group):
    """Ctrl-C exits with 130 (128 + SIGINT) and a one-line message, never a traceback;
    numpy's floating-point RuntimeWarnings never reach standard error (every result is
    checked for finiteness where it is computed)."""

    def invoke(self, ctx: click.Context) -> Any:
        import warnings

        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", RuntimeWarning)
                return super().invoke(ctx)
        except KeyboardInterrupt:
            click.echo("error: interrupted", err=True)
            raise click.exceptions.Exit(130) from None
        except BrokenPipeError:
            raise
        except OSError as exc:
            if exc.errno == errno.EPIPE:
                raise
            click.echo(f"error: could not write the output: {exc.strerror or exc}",
                       err=True)
            raise click.exceptions.Exit(1) from None


STRICT_EXIT = 3


def _strict(enabled: bool, warnings: Any) -> None:
    """With ``--strict``, any warning ends the command with exit status 3, no output."""
    if not enabled or not warnings:
        return
    _warn(warnings)
    count = len(warnings)
    _err(f"error: --strict: {count} warning{'s' if count > 1 else ''}; no output written")
    sys.exit(STRICT_EXIT)


def _export_options(function: Callable[..., Any]) -> Callable[..., Any]:
    options = [
        click.option("--csv", "csv_file", metavar="FILE", default=None,
                     help="Also write the table (JSON names, unrounded) as CSV to FILE."),
        click.option("--xlsx", "xlsx_file", metavar="FILE", default=None,
                     help="Also write the tables to an .xlsx workbook (needs openpyxl)."),
    ]
    for option in reversed(options):
        function = option(function)
    return function


def _can_export(xlsx_file: str | None) -> None:
    """Refuse ``--xlsx`` without openpyxl before any file is written."""
    if xlsx_file:
        from ._workbooks import require_openpyxl

        require_openpyxl(xlsx_file)


_STRICT = click.option("--strict", is_flag=True,
                       help="Exit with status 3, writing nothing, when there is a warning.")


class _Progress:
    """A one-line progress indication on a terminal, shown only after about a second."""

    def __init__(self, enabled: bool) -> None:
        self.enabled = enabled and sys.stderr.isatty()
        self.start = time.monotonic()
        self.done = 0
        self.shown = False

    def __call__(self, done: int, total: int) -> None:
        self.done += done  # the engine reports trials done since the last call
        if not self.enabled or time.monotonic() - self.start < 1.0:
            return
        share = min(1.0, self.done / max(total, 1))
        sys.stderr.write(f"\rMonte Carlo {100 * share:5.1f} % of {total:,} trials ")
        sys.stderr.flush()
        self.shown = True

    def close(self) -> None:
        if self.shown:
            sys.stderr.write("\r" + " " * 60 + "\r")
            sys.stderr.flush()


def _common(function: Callable[..., Any]) -> Callable[..., Any]:
    options = [
        click.option("--trials", type=click.IntRange(0, MAX_TRIALS), default=None,
                     help="Monte Carlo trials (0 = none)."),
        click.option("--adaptive", is_flag=True,
                     help="JCGM 101 7.9 adaptive procedure instead of a fixed number."),
        click.option("--seed", type=click.IntRange(0, 2 ** 64 - 1), default=None,
                     help="Random seed."),
        click.option("--coverage", type=_COVERAGE, default=None,
                     help="Coverage probability, e.g. 0.95 or 0.99."),
        click.option("--digits", type=click.IntRange(1, 6), default=None,
                     help="Significant digits of the reported uncertainty."),
        click.option("--json", "as_json", is_flag=True,
                     help="Print the JSON result document instead of the table."),
    ]
    for option in reversed(options):
        function = option(function)
    return function


_REPORTED_OPTION = click.option(
    "--reported-interval", type=click.Choice(["gum", "monte_carlo", "monte_carlo_shortest"]),
    default=None, help="Which interval is the result: the GUM one (default) or the Monte "
    "Carlo symmetric or shortest one (JCGM 101 8.2); overrides the file's setting.")


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(version=__version__, prog_name="budget")
@_QUIET
def main() -> None:
    """Measurement-uncertainty budgets to the GUM, cross-checked by Monte Carlo."""


@main.command()
@_QUIET
@click.argument("model_file", metavar="MODEL.toml")
@_common
@click.option("--html", "html_file", metavar="FILE", default=None,
              help="Also write the self-contained HTML report to FILE.")
@click.option("--second-order", is_flag=True,
              help="Add the GUM 5.1.2 higher-order terms (uncorrelated inputs).")
@_export_options
@_STRICT
@_REPORTED_OPTION
def run(model_file: str, trials: int | None, adaptive: bool, seed: int | None,
        coverage: float | None, digits: int | None, as_json: bool, html_file: str | None,
        second_order: bool, csv_file: str | None, xlsx_file: str | None,
        strict: bool, reported_interval: str | None) -> None:
    """Evaluate MODEL.toml: GUM budget and Monte Carlo cross-check."""
    _one_shot()
    from ._errors import BudgetError

    progress = _Progress(not as_json and not _quiet())
    try:
        _check_suffixes(html_file, csv_file, xlsx_file)
        _check_outputs(html_file, csv_file, xlsx_file)
        result = _evaluate(model_file, trials, adaptive, seed, coverage, digits,
                           second_order, progress, reported_interval)
        progress.close()
        _strict(strict, result.warnings)
        _can_export(xlsx_file)
        if html_file:
            from ._report import write_report

            write_report(result, html_file)
        if csv_file or xlsx_file:
            from ._document import result_document
            from ._export import budget_tables, write_tables
            from ._output import files_of_model

            _check_outputs(csv_file, xlsx_file, protect=files_of_model(result.model))
            write_tables(budget_tables(result_document(result)), csv_file, xlsx_file)
    except BudgetError as error:
        progress.close()
        _option_error(error, {"trials": trials, "coverage": coverage, "seed": seed,
                              "digits": digits, "reported_interval": reported_interval})
        _fail(error)
    _print_result(result, as_json)
    _keep(result)


def _evaluate(model_file: str, trials: int | None, adaptive: bool, seed: int | None,
              coverage: float | None, digits: int | None, second_order: bool,
              progress: _Progress, reported_interval: str | None = None) -> Any:
    from ._analysis import evaluate

    if adaptive and trials is not None:  # which one was meant cannot be guessed
        raise click.UsageError("--adaptive chooses the number of trials itself: give either "
                               f"--adaptive or --trials, found both (--trials {trials})")
    model = _read_model(model_file)
    return evaluate(model, coverage=coverage, trials=trials, adaptive=adaptive, seed=seed,
                    digits=digits, second_order=second_order, progress=progress,
                    reported_interval=reported_interval)


def _print_result(result: Any, as_json: bool) -> None:
    if as_json:
        from ._document import result_document
        from ._gcpause import paused_collection
        from ._jsontext import json_parts

        with paused_collection():
            parts = json_parts(result_document(result, columns=True))
        _out(parts, data=True)
    else:
        from ._table import render

        _out(render(result))
    _warn(result.warnings)


@main.command()
@_QUIET
@click.argument("model_file", metavar="MODEL.toml")
@_common
@click.option("--target", type=_TARGET, default=None,
              metavar="U", help="What each leading input's u must be for this U.")
@_STRICT
def explain(model_file: str, trials: int | None, adaptive: bool, seed: int | None,
            coverage: float | None, digits: int | None, as_json: bool,
            target: float | None, strict: bool) -> None:
    """What dominates the uncertainty of MODEL.toml, why, and what would reduce it."""
    from ._errors import BudgetError
    from ._explanation import explain as run_explain
    from ._explanation_view import explanation_document, render

    progress = _Progress(not as_json and not _quiet())
    try:
        result = _evaluate(model_file, trials, adaptive, seed, coverage, digits, False,
                           progress)
        progress.close()
        _strict(strict, result.warnings)
        explanations = run_explain(result, target=target)
    except BudgetError as error:
        progress.close()
        _option_error(error, {"trials": trials, "coverage": coverage, "seed": seed,
                              "digits": digits})
        _fail(error)
    if as_json:
        from ._document import SCHEMA_VERSION

        document = {"schema_version": SCHEMA_VERSION, "title": result.model.title,
                    "model_sha256": result.model.sha256,
                    **explanation_document(explanations), "warnings": list(result.warnings)}
        from ._jsontext import json_text

        _out(json_text(document), data=True)
    else:
        _out(render(explanations, result.digits))
    _warn(result.warnings)


@main.command()
@_QUIET
@click.argument("model_file", metavar="MODEL.toml")
@_STRICT
def check(model_file: str, strict: bool) -> None:
    """Validate MODEL.toml (syntax, names, units, distributions, correlations)."""
    _one_shot()
    from ._errors import BudgetError

    from ._evaluation import jacobian_at_estimates

    try:
        model = _read_model(model_file)
        # the equations at the estimates: a division by zero or a log of a negative
        # estimate is an error of the file, which run would refuse
        jacobian_at_estimates(model)
    except BudgetError as error:
        _fail(error)
    _strict(strict, model.warnings)
    shown = "<stdin>" if model_file == "-" else model_file
    _out(f"ok: {shown}: {len(model.inputs)} inputs, {len(model.measurands)} "
               f"measurand(s), {len(model.definitions)} definition(s), "
               f"{len(model.correlations)} correlation(s)"
               + (f", {len(model.estimated_together)} set(s) estimated together"
                  if model.estimated_together else ""))
    _warn(model.warnings)
    _keep(model)


@main.command()
@_QUIET
@click.argument("campaign_file", metavar="CAMPAIGN.toml")
@click.option("--json", "as_json", is_flag=True, help="Print the JSON certification document.")
@click.option("--html", "html_file", metavar="FILE", default=None,
              help="Also write the certification report to FILE.")
@click.option("--trials", type=click.IntRange(0, MAX_TRIALS), default=None,
              help="Monte Carlo trials for the characterization model (0 = none).")
@click.option("--seed", type=click.IntRange(0, 2 ** 64 - 1), default=None,
              help="Random seed.")
@click.option("--allow-outside-folder", is_flag=True,
              help="Allow files named in the campaign outside its folder tree.")
@_export_options
@_STRICT
@_REPORTED_OPTION
def certify(campaign_file: str, as_json: bool, html_file: str | None, trials: int | None,
            seed: int | None, allow_outside_folder: bool, csv_file: str | None,
            xlsx_file: str | None, strict: bool,
            reported_interval: str | None) -> None:
    """Certify a batch: characterization, homogeneity, stability, comparison."""
    from ._campaign import load_campaign
    from ._certification import certify as run_certification
    from ._errors import BudgetError

    progress = _Progress(not as_json and not _quiet())
    try:
        _check_suffixes(html_file, csv_file, xlsx_file)
        _check_outputs(html_file, csv_file, xlsx_file)
        campaign = load_campaign(campaign_file, allow_outside=allow_outside_folder)
        cert = run_certification(campaign, trials=trials, seed=seed, progress=progress,
                                 reported_interval=reported_interval)
        progress.close()
        _strict(strict, cert.warnings)
        _can_export(xlsx_file)
        if html_file:
            from ._report import write_certification_report

            write_certification_report(cert, html_file)
        if csv_file or xlsx_file:
            from ._document import certification_document
            from ._export import certification_tables, write_tables
            from ._output import files_of_campaign

            _check_outputs(csv_file, xlsx_file, protect=files_of_campaign(campaign))
            write_tables(certification_tables(certification_document(cert)), csv_file,
                         xlsx_file)
    except BudgetError as error:
        progress.close()
        _option_error(error, {"trials": trials, "seed": seed,
                              "reported_interval": reported_interval})
        _fail(error)
    if as_json:
        from ._document import certification_document
        from ._jsontext import json_text

        _out(json_text(certification_document(cert)), data=True)
    else:
        from ._table import render_certification

        _out(render_certification(cert, campaign.model.settings.digits))
    _warn(cert.warnings)


@main.command()
@_QUIET
@click.argument("before", metavar="A")
@click.argument("after", metavar="B")
@click.option("--json", "as_json", is_flag=True, help="Print the JSON comparison document.")
@click.option("--html", "html_file", metavar="FILE", default=None,
              help="Also write the comparison as an HTML page to FILE.")
@click.option("--trials", type=click.IntRange(min=0), default=0,
              help="Monte Carlo trials when a model is evaluated (default 0: GUM only).")
@click.option("--digits", type=click.IntRange(1, 6), default=2,
              help="Significant digits of the uncertainties shown.")
def compare(before: str, after: str, as_json: bool, html_file: str | None, trials: int,
            digits: int) -> None:
    """What changed from budget A to budget B (model files or saved JSON results)."""
    from ._difference import compare as run_compare, load_side
    from ._errors import BudgetError

    try:
        _check_suffixes(html_file)
        _check_outputs(html_file)
        difference = run_compare(load_side(before, trials=trials),
                                 load_side(after, trials=trials))
        if html_file:
            from ._report import write_difference_report

            write_difference_report(difference, html_file, digits)
    except BudgetError as error:
        _fail(error)
    if as_json:
        from ._difference_view import difference_document

        from ._jsontext import json_text

        _out(json_text(difference_document(difference)), data=True)
    else:
        from ._difference_view import render_difference

        _out(render_difference(difference, digits).rstrip("\n"))


@main.command()
@_QUIET
@click.argument("folder", metavar="DIR")
def demo(folder: str) -> None:
    """Copy the demo and reference models with their data into DIR."""
    from ._demo_files import copy_demo
    from ._errors import BudgetError

    try:
        written = copy_demo(folder)
    except BudgetError as error:
        _fail(error)
    except OSError as error:
        _fail(Exception(f"{folder}: expected a folder that can be written, found "
                        f"{error.strerror or error}"))
    _out(f"copied {len(written)} files into {folder}; try\n"
         f"  budget certify {Path(folder) / 'vics-as-25a' / 'campaign.toml'}\n"
         f"  budget run {Path(folder) / 'reference' / 'eurachem-a2-naoh.toml'}")


@main.command("certify-all")
@_QUIET
@click.argument("folder", metavar="FOLDER")
@click.option("--json", "as_json", is_flag=True, help="Print the JSON summary document.")
@click.option("--csv", "csv_file", metavar="FILE", default=None,
              help="Also write one row per campaign to FILE (CSV).")
@click.option("--html", "html_file", metavar="FILE", default=None,
              help="Also write the summary with a trend chart to FILE.")
@click.option("--trials", type=click.IntRange(0, MAX_TRIALS), default=0, show_default=True,
              help="Monte Carlo trials per campaign (0 = the linear budget only).")
@click.option("--seed", type=click.IntRange(0, 2 ** 64 - 1), default=None,
              help="Random seed.")
@click.option("--workers", type=click.IntRange(1, 256), default=None,
              help="Worker processes (default: one per core).")
def certify_all(folder: str, as_json: bool, csv_file: str | None, html_file: str | None,
                trials: int, seed: int | None, workers: int | None) -> None:
    """Certify every campaign under FOLDER; summary of certified values and U over time."""
    from .batch import BATCH_COLUMNS, batch_document, batch_rows, certify_folder, render_batch
    from ._errors import BudgetError

    try:
        _check_suffixes(html_file, csv_file)
        _check_outputs(csv_file, html_file)
        batch = certify_folder(folder, trials=trials, seed=seed, workers=workers)
        batch = replace(batch, entries=tuple(_option_named(e) for e in batch.entries))
        _check_outputs(csv_file, html_file,
                       protect=[("campaign", os.path.join(folder, e.path))
                                for e in batch.entries]
                       + [item for e in batch.entries for item in e.files])
        if csv_file:
            from ._export import csv_text
            from ._output import write_atomic

            rows = [[row[c] for c in BATCH_COLUMNS] for row in batch_rows(batch)]
            write_atomic(csv_file, csv_text(BATCH_COLUMNS, rows))
        if html_file:
            from ._report import write_batch_report

            write_batch_report(batch, html_file)
    except BudgetError as error:
        _fail(error)
    if as_json:
        from ._jsontext import json_text

        _out(json_text(batch_document(batch)),
             data=True)
    else:
        _out(render_batch(batch))
    failed = [e for e in batch.entries if e.error is not None]
    _warn(f"{e.path}: not certified: {e.error}" for e in failed)
    if failed:  # the summary is complete; the status tells a script that some failed
        sys.exit(1)


def _option_named(entry: Any) -> Any:
    """A campaign's error about the value of --trials or --seed (which ``certify_folder``
    names as its argument) with the option named."""
    for key in ("trials", "seed"):
        head = f"certify_folder(): {key}: "
        if entry.error and entry.error.startswith(head):
            return replace(entry, error=f"{_OPTIONS[key]}: {entry.error[len(head):]}")
    return entry


if __name__ == "__main__":  # pragma: no cover
    main()
