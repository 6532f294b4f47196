"""Verdicts -> material for people: rounded figures, per-party views, plain
sentences, and the `pactlang report` HTML page with its charts.

`amounts`, `parties`, `tables` and `words` are shared by the text, Markdown and
HTML renderers; `charts` (matplotlib, imported only by `report`) and `html`
build the page.
"""
