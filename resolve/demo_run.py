"""`make demo`: generate the demo extract, run the pipeline, open the workbench.

With a terminal attached the review workbench opens on the demo project; without one (CI,
a pipe) the run summary and the evaluation against the demo's known answers are printed.
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

DATA = Path("demo-data")
PROJECT = Path("demo-project")
RECORDS = int(os.environ.get("DEMO_RECORDS", "20000"))


def main() -> int:
    from click.testing import CliRunner  # noqa: F401  (keeps click import cost out of timing)

    from resolve.cli import main as cli

    steps = [
        ["demo-data", "--records", str(RECORDS), "--seed", "7", "--out", str(DATA)],
        ["run", str(DATA / "customers.csv"), "--project", str(PROJECT), "--today", "2026-12-01"],
        ["evaluate", "--project", str(PROJECT), "--truth", str(DATA / "truth.csv")],
    ]
    for args in steps:
        print(f"$ resolve {' '.join(args)}", flush=True)
        try:
            cli.main(args, prog_name="resolve", standalone_mode=False)
        except SystemExit as exc:
            if exc.code:
                return int(exc.code)
        print(flush=True)
    if sys.stdin.isatty() and sys.stdout.isatty():
        print(f"$ resolve review --project {PROJECT}", flush=True)
        try:
            cli.main(["review", "--project", str(PROJECT)], prog_name="resolve",
                     standalone_mode=False)
        except SystemExit as exc:
            return int(exc.code or 0)
    else:
        print(f"No terminal attached; open the workbench with: "
              f".venv/bin/resolve review --project {PROJECT}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
