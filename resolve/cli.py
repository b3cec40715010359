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


if __name__ == "__main__":  # pragma: no cover
    main()
