"""The `resolve` command line: a thin layer over the library.

Commands parse options, call library functions and print short summaries. Library errors
(`resolve.errors.ResolveError`) become one plain line on stderr and exit code 1; usage errors
exit 2 (click's own convention); an interrupt exits 130. Nothing here computes results.
"""

from __future__ import annotations

import functools
import json
import os
import sys
from pathlib import Path

import click

from resolve.errors import ExitCode, ResolveError

CONTEXT = {"help_option_names": ["-h", "--help"], "max_content_width": 100}


def _fail(message: str, code: int = ExitCode.DATA_ERROR) -> None:
    click.echo(f"error: {message}", err=True)
    sys.exit(int(code))


def guarded(func):
    """Turn library errors into one line and a fixed exit code; never show a traceback."""

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        try:
            return func(*args, **kwargs)
        except ResolveError as exc:
            _fail(str(exc), exc.exit_code)
        except KeyboardInterrupt:
            _fail("interrupted.", ExitCode.INTERRUPTED)
        except (click.exceptions.Exit, click.ClickException, SystemExit):
            raise
        except MemoryError:
            _fail("out of memory; try a smaller extract or a machine with more memory.")
        except Exception as exc:  # noqa: BLE001 - last line of defence for users
            if os.environ.get("RESOLVE_DEBUG"):
                raise
            first = (str(exc).splitlines() or [type(exc).__name__])[0]
            _fail(f"internal error ({type(exc).__name__}: {first}); "
                  f"re-run with RESOLVE_DEBUG=1 for details and please report it.")

    return wrapper


def input_options(func):
    """Options shared by commands that read extract files."""
    func = click.option("--mapping", "mapping", type=click.Path(dir_okay=False),
                        help="Mapping TOML (roles -> columns). Detected from headers if omitted.")(func)
    func = click.option("--encoding", default=None,
                        help="Text encoding of CSV/JSON inputs (default: UTF-8, with or without BOM).")(func)
    func = click.option("--delimiter", default=None,
                        help="CSV delimiter (default: sniffed from the file).")(func)
    func = click.option("--country", "default_country", default="US", show_default=True,
                        help="Region assumed for phones, IDs and dates written without a country.")(func)
    return func


def project_option(func):
    return click.option("--project", "project", required=True,
                        type=click.Path(file_okay=False),
                        help="Project folder.")(func)


def quiet_option(func):
    return click.option("--quiet", "-q", is_flag=True, help="Print nothing but errors.")(func)


@click.group(context_settings=CONTEXT)
@click.version_option(package_name="resolve", prog_name="resolve")
def main() -> None:
    """Entity resolution and identity-sharing workbench for KYC teams.

    Clean identifiers, find duplicate records, households and shared or synthetic
    identities, review them with an audit trail and export approved merges.

    Links and flags are leads for human review, not findings about a person.

    \b
    Example:
      resolve run customers.csv --project book
      resolve review --project book
    """


def _ingest_settings(encoding, delimiter):
    from resolve.ingest import IngestSettings

    return IngestSettings(encoding=encoding, delimiter=delimiter)


@main.command(context_settings=CONTEXT)
@click.argument("inputs", nargs=-1, required=True, type=click.Path())
@input_options
@click.option("--json", "as_json", is_flag=True, help="Print the profile as JSON.")
@guarded
def profile(inputs, mapping, encoding, delimiter, default_country, as_json):
    """Data-quality profile of INPUT files, to read before matching.

    Per role fill rate; valid / invalid / placeholder counts with the top reasons; the most
    shared identifier values; quarantined rows.

    \b
    Example:
      resolve profile customers.csv --json > profile.json
    """
    from resolve.ingest import read_inputs
    from resolve.normalise.records import NormaliseSettings, normalise_records
    from resolve.profile import profile_extract
    from resolve.report import format_profile

    ingest = read_inputs(list(inputs), mapping, _ingest_settings(encoding, delimiter))
    if mapping is None:
        default_country = ingest.mapping.defaults.get("country", default_country)
    normalised = normalise_records(ingest.records, NormaliseSettings(default_country=default_country))
    result = profile_extract(ingest, normalised)
    if as_json:
        click.echo(json.dumps(result, indent=2, default=str))
    else:
        click.echo(format_profile(result))


@main.command(context_settings=CONTEXT)
@click.argument("inputs", nargs=-1, required=True, type=click.Path())
@project_option
@input_options
@click.option("--today", default=None, help="Reference date (YYYY-MM-DD) for ages; default today.")
@click.option("--auto-threshold", type=click.FloatRange(0, 1), default=None,
              help="Match probability at or above which records are linked as one person "
                   "(default: from the fitted model).")
@click.option("--review-threshold", type=click.FloatRange(0, 1), default=None,
              help="Match probability from which pairs go to review (default: from the model).")
@click.option("--model", "model_path", type=click.Path(dir_okay=False), default=None,
              help="Reuse a saved match model (model.json of an earlier run) instead of fitting.")
@click.option("--rules", "rules_path", type=click.Path(dir_okay=False), default=None,
              help="Signal rule overrides (TOML), see docs/signals.md.")
@quiet_option
@guarded
def run(inputs, project, mapping, encoding, delimiter, default_country, today, auto_threshold,
        review_threshold, model_path, rules_path, quiet):
    """Run the whole pipeline on INPUT files into the project folder.

    Ingest, normalise, find candidate pairs, score them, link, cluster, raise signals and
    build the review queue. Earlier reviewer decisions in the project are re-applied.

    \b
    Example:
      resolve run branch.csv app.jsonl cards.parquet --project book --country US
    """
    from resolve.pipeline import RunSettings, run_pipeline
    from resolve.report import format_run_summary

    settings = RunSettings(default_country=default_country, today=today,
                           auto_threshold=auto_threshold, review_threshold=review_threshold,
                           model_path=model_path, rules_path=rules_path, encoding=encoding,
                           delimiter=delimiter)
    progress = None if quiet else (lambda stage: click.echo(f"  {stage}...", err=True))
    from resolve.ingest.memory import keep_freed_memory

    keep_freed_memory()  # a batch run: reuse freed buffers instead of faulting pages again
    summary = run_pipeline(list(inputs), project, mapping, settings, progress=progress)
    if not quiet:
        click.echo(format_run_summary(summary))


@main.command("demo-data", context_settings=CONTEXT)
@click.option("--records", type=click.IntRange(20, 20_000_000), default=10_000, show_default=True,
              help="Number of records in the extract.")
@click.option("--seed", type=int, default=7, show_default=True, help="Random seed (same seed, same files).")
@click.option("--out", "out_dir", required=True, type=click.Path(file_okay=False),
              help="Folder to write customers.csv, truth.csv and README.txt into.")
@click.option("--rate", "rates", multiple=True, metavar="NAME=VALUE",
              help="Override a scenario rate, e.g. --rate household_share=0.1 (repeatable).")
@click.option("--no-hard-cases", is_flag=True, help="Leave out the hard cases (twins, namesakes...).")
@quiet_option
@guarded
def demo_data(records, seed, out_dir, rates, no_hard_cases, quiet):
    """Write the invented demo scenario: an extract and its ground truth.

    A regional credit union merging an acquired card portfolio with its branch and app
    onboarding records. All people and institutions are invented.

    \b
    Example:
      resolve demo-data --records 100000 --seed 7 --out demo-data
    """
    from resolve.demo import DemoRates, generate_demo

    overrides = {}
    for item in rates:
        if "=" not in item:
            raise click.UsageError(f"--rate takes NAME=VALUE, got '{item}'.")
        name, value = item.split("=", 1)
        overrides[name.strip()] = value.strip()
    try:
        demo_rates = DemoRates.from_overrides(overrides) if overrides else None
    except ResolveError as exc:
        raise click.UsageError(str(exc)) from None
    summary = generate_demo(out_dir, records=records, seed=seed, rates=demo_rates,
                            hard_cases=not no_hard_cases)
    if not quiet:
        click.echo("\n".join(summary.lines()))


@main.command(context_settings=CONTEXT)
@project_option
@click.option("--truth", required=True, type=click.Path(dir_okay=False, exists=True),
              help="Ground-truth CSV (record_id, person_id, household_id, ring_id, label).")
@click.option("--json", "as_json", is_flag=True, help="Print the figures as JSON.")
@click.option("--min-severity", type=click.Choice(["low", "medium", "high"]), default="medium",
              show_default=True, help="Lowest flag severity that counts as flagged.")
@guarded
def evaluate(project, truth, as_json, min_severity):
    """Compare a project's latest run with ground truth.

    Same-person pairwise and B-cubed precision/recall/F1, over-merged and split persons,
    household pairwise figures, risk-flag precision/recall, blocking reduction ratio and
    pairs completeness, and a threshold sweep.

    \b
    Example:
      resolve evaluate --project book --truth demo-data/truth.csv
    """
    from resolve.evaluate import evaluate as run_evaluation
    from resolve.evaluate import format_report
    from resolve.evaluate.inputs import load_run_for_evaluation, read_truth_csv

    tables = load_run_for_evaluation(project)
    result = run_evaluation(read_truth_csv(truth), min_severity=min_severity, **tables)
    if as_json:
        click.echo(json.dumps(result, indent=2, default=str))
    else:
        click.echo(format_report(result))


@main.command(context_settings=CONTEXT)
@project_option
@click.argument("record_a")
@click.argument("record_b")
@click.option("--json", "as_json", is_flag=True, help="Print the evidence as JSON.")
@guarded
def explain(project, record_a, record_b, as_json):
    """Field-by-field evidence for one pair of records (RECORD_A RECORD_B are record IDs).

    Shows each field's agreement level, the values on both sides (national IDs masked),
    m, u and the match weight, then the prior, total weight and probability.

    \b
    Example:
      resolve explain --project book C-100234 A-88120
    """
    from resolve.explain_cli import explain_records, format_explanation

    table = explain_records(project, record_a, record_b)
    if as_json:
        click.echo(table.to_json(orient="records", indent=2))
    else:
        click.echo(format_explanation(table, record_a, record_b))


@main.command(context_settings=CONTEXT)
@project_option
@click.option("--reviewer", default=None, help="Reviewer name (default: project setting or OS user).")
@guarded
def review(project, reviewer):
    """Open the terminal review workbench on a project.

    \b
    Example:
      resolve review --project book --reviewer alex
    """
    from resolve.project import Project

    Project.open(project)
    from tui.app import make_app

    app = make_app(project, reviewer=reviewer)
    app.run()
    if app.return_code:
        sys.exit(int(app.return_code))


import resolve.cli_review  # noqa: E402,F401  (registers export, queue, decide, status, audit, reveal)

if __name__ == "__main__":  # pragma: no cover
    main()
