"""Reports of an evaluation: terminal summary and self-contained HTML.

Both render one plain *results bundle* (a JSON-ready dict, written as ``results.json``
by ``trawl eval``), so every figure in the HTML report can be checked against it:

- ``format``: "trawl-results/1"; ``title``; ``trawl_version``
- ``setup``: ``catalogue`` {path, fingerprint, items, types {type: count}}, ``metrics``,
  ``primary`` (the metric charted), ``depth``, ``resamples``, ``seed``, ``alpha``,
  ``notes`` {label: text}, ``versions`` {package: version}
- ``systems``: [{name, spec, kind, fingerprint, dimensions, index_bytes, bytes_per_item}]
- ``evaluations``: one per judgment set: {name, label, silver, how, queries_file,
  qrels_file, queries, judgments, baseline, latency {system: {p50_ms, p95_ms, p99_ms,
  queries_per_s}}, scores [{run, metric, type (None = all), n, mean, low, high}],
  comparison [{run, baseline, metric, type, n, diff, low, high, p_bootstrap,
  p_randomisation, p_corrected, effect}], corrected ("bootstrap" or "randomisation": the
  p-values Holm's correction was applied to), misses [{run, k, rows [{type, queries,
  hit_at_1, hit_at_k, misses, median_rank, lost_to {type: share}}]}], miss_headline,
  worst {run, depth, queries [{type, qid, query, rank, wanted, winner}]}, warnings,
  judged_by (who made the judgments; for silver sets: that figures are estimates, with
  the measured agreement when known)}
  where wanted/winner are {id, type, title, snippet} or None
- ``agreement``: None or {a, b, a_label, b_label, metric, shared, tau {value, low, high},
  rho {...}, systems [{run, score_a, score_b, rank_a, rank_b}], flips [{first, second,
  diff_a, diff_b}]}
"""
