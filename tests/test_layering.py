"""The library must work without the terminal UI: importing it never loads Textual."""

import subprocess
import sys


def test_library_does_not_import_textual():
    code = (
        "import sys, resolve, resolve.cli, resolve.ingest, resolve.normalise.records, "
        "resolve.profile\n"
        "import pkgutil, importlib\n"
        "for m in pkgutil.walk_packages(resolve.__path__, 'resolve.'):\n"
        "    importlib.import_module(m.name)\n"
        "assert 'textual' not in sys.modules, [m for m in sys.modules if m.startswith('textual')]\n"
    )
    subprocess.run([sys.executable, "-c", code], check=True)
