"""Silver judgments rank systems as people do, on a real collection with real judgments.

Source: the Cranfield collection (../shared/data/cranfield; Cleverdon et al., Cranfield
II, 1960s): 1,400 aeronautics abstracts, 225 queries and their human relevance
judgments. The goal is the project's own (issue 14; common practice, no source): with
default settings, Kendall tau >= 0.8 between the system orders under silver and under
human judgments, and Pearson r >= 0.9 between their nDCG@10 figures, on seeds 0-2
(measured with these defaults: tau 0.80-1.00, r 0.98-0.99).
Slow: five systems, three of which embed every abstract once (shared across seeds).
"""

from __future__ import annotations

import pytest
from scipy.stats import kendalltau, pearsonr

from trawl.catalogue import load_catalogue
from trawl.fusion import reciprocal_rank_fusion
from trawl.index import retrieve
from trawl.judgments import read_qrels
from trawl.metrics import per_query
from trawl.queries import read_queries
from trawl.synth import SynthSettings, load_wordnet, synthesise

pytestmark = [pytest.mark.slow,
              pytest.mark.skipif(load_wordnet() is None, reason="WordNet not installed")]
SYSTEMS = ("minilm", "minilm-int8", "static", "bm25", "rrf")


@pytest.fixture(scope="module")
def setup(cranfield, distilled_static):
    cat = load_catalogue(cranfield / "catalogue.jsonl")
    # cache None: the session's embedding cache, where the retrieval checks have already
    # put minilm's vectors of every abstract
    return cat, read_queries(cranfield / "queries.tsv"), read_qrels(cranfield / "qrels.txt"), \
        {"minilm": "minilm", "minilm-int8": "minilm-int8",
         "static": f"static:{distilled_static}", "bm25": "bm25"}, None


def scores(cat, queries, qrels, specs, cache) -> list[float]:
    runs = {n: retrieve(cat, s, queries, k=10, cache_dir=cache) for n, s in specs.items()}
    runs["rrf"] = reciprocal_rank_fusion([runs["minilm"], runs["bm25"]])
    judged = {q: g for q, g in qrels.items() if q in queries}
    return [float(per_query(judged, runs[n], ["ndcg@10"])["ndcg@10"].mean()) for n in SYSTEMS]


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_silver_ranks_systems_as_cranfield_judges_do(setup, seed, record_property):
    cat, queries, qrels, specs, cache = setup
    human = scores(cat, queries, qrels, specs, cache)
    silver_set = synthesise(cat, SynthSettings(seed=seed), cache_dir=cache, quiet=True)
    silver = scores(cat, dict(silver_set.queries), silver_set.qrels, specs, cache)
    tau, r = kendalltau(human, silver).statistic, pearsonr(human, silver).statistic
    record_property("silver_queries", len(silver_set.queries))
    record_property("tau_r", (round(tau, 2), round(r, 2)))
    assert tau >= 0.8 - 1e-9 and r >= 0.9, (human, silver)  # 5 systems: tau in steps of 0.2
    # Coverage: the goal is 70% of the items; on Cranfield's long titles only about a
    # third yield a query short or reworded enough (docs/silver-quality.md). This guards
    # that third: before the ceiling spared short queries, 146 of 1,400 items had one.
    assert silver_set.summary["coverage"]["abstract"] >= 0.3
