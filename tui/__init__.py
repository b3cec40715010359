"""The review workbench: a Textual interface over a resolve project.

It shows the prioritised work list, one cluster at a time with its evidence, and records the
reviewer's decisions through the library's decisions layer (`tui.actions`). Library code in
`resolve` never imports this package. Start it with ``resolve review --project DIR``, or from
Python with ``tui.app.make_app(DIR).run()``.
"""
