"""resolve: entity resolution and identity-sharing workbench for KYC teams.

The library works from Python with no command line or terminal UI: every pipeline stage is a
plain function from tables to tables. `resolve.cli` and the `tui` package are thin layers on top.
"""

__version__ = "0.1.0"
