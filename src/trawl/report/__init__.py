"""Reports of an evaluation: terminal summary and self-contained HTML.

Both render one plain *results bundle* (a JSON-ready dict, written as ``results.json``
by ``trawl eval``), so every figure in the HTML report can be checked against it. The
format is defined by the typed dataclasses in ``trawl.pipeline.bundle`` (``Results``),
with a JSON Schema derived from them (``results_schema``).
"""
