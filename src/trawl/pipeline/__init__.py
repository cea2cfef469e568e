"""The whole evaluation in one call, composed from the public functions of the modules.

``evaluate`` indexes a catalogue with every encoder (reusing indexes whose catalogue,
template and encoder still match, and the embedding cache otherwise), searches each
judgment set's queries while timing them, fuses runs, scores with bootstrap intervals,
compares every system with a baseline, tabulates misses, measures how alike two
judgment sets rank the systems when asked, and writes every artefact plus report.html
into one folder. ``demo`` does all of it on the bundled transit catalogue from nothing.

The rooms: ``systems`` (what is evaluated), ``sets`` (judgment sets), ``reuse`` (what a
rerun keeps), ``searching`` (timed search of one query set), ``bundle`` (the results
format, typed, with its schema), ``assembly`` (the bundle's entries), ``outputs`` (table
and JSON writers), ``evaluation`` and ``demo_job``.
"""

from .bundle import Results, results_schema
from .demo_job import DEMO_ENCODERS, demo, demo_data_root
from .evaluation import DEFAULT_DEPTH, DEFAULT_RESAMPLES, EvalResult, evaluate
from .outputs import write_json, write_rows
from .reuse import fused_key, previous_search, search_key
from .sets import JudgmentSet
from .systems import System, clean_name, parse_system, plan_systems

__all__ = ["DEFAULT_DEPTH", "DEFAULT_RESAMPLES", "DEMO_ENCODERS", "EvalResult", "JudgmentSet",
           "Results", "System", "clean_name", "demo", "demo_data_root", "evaluate",
           "fused_key", "parse_system", "plan_systems", "previous_search", "results_schema",
           "search_key", "write_json", "write_rows"]
