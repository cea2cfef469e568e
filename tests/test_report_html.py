"""report.html from a hand-made results bundle: escaping, self-containment, figures."""

from __future__ import annotations

import copy
import re
import xml.etree.ElementTree as ET
from html.parser import HTMLParser

import pytest

from trawl.report import format as fmt
from trawl.report.charts import PALETTE, log_ticks, nice_ticks
from trawl.report.html import STYLE, render_html

HOSTILE_TITLE = "<script>alert(1)</script>"
HOSTILE_QUERY = '"><img src=x onerror=alert(2)> refund & "quotes"'


def _scores(runs, types, base):
    out = []
    for i, run in enumerate(runs):
        for metric, shift in (("ndcg@10", 0.0), ("mrr@10", 0.05)):
            m = base - 0.07 * i + shift
            out.append({"run": run, "metric": metric, "type": None, "n": 40, "mean": m,
                        "low": m - 0.04, "high": m + 0.04})
            for j, t in enumerate(types):
                v = m - 0.03 * j
                out.append({"run": run, "metric": metric, "type": t, "n": 10 + j, "mean": v,
                            "low": v - 0.08, "high": v + 0.08})
    return out


def sample_bundle() -> dict:
    """A results bundle as `trawl eval` writes it, with hostile catalogue and query text."""
    runs = ["minilm", "minilm-int8", "bm25", "minilm+bm25"]
    types = ["article", "faq", "screen", "form & more"]
    comparison = []
    for run in runs[1:]:
        for metric in ("ndcg@10", "mrr@10"):
            d = -0.07 * runs.index(run)
            comparison.append({"run": run, "baseline": "minilm", "metric": metric, "type": None,
                               "n": 40, "diff": d, "low": d - 0.03, "high": d + 0.03,
                               "p_bootstrap": 0.0004, "p_randomisation": 0.0006,
                               "p_corrected": 0.002 if run == "bm25" else 0.31,
                               "effect": -0.4})
    item = {"id": "kb-1", "type": "article", "title": HOSTILE_TITLE,
            "snippet": "Fares <b>bold</b> & zones"}
    winner = {"id": "scr-2", "type": "screen", "title": "Top up", "snippet": ""}
    evaluation = {
        "name": "silver", "label": "silver set", "silver": True,
        "how": "synthesised from the catalogue (seed 0)", "queries_file": "s.queries.tsv",
        "qrels_file": "s.qrels", "queries": 40, "judgments": 55, "baseline": "minilm",
        "latency": {r: {"p50_ms": 0.05 + 3 * i, "p95_ms": 0.1 + 4 * i, "p99_ms": 0.2 + 5 * i,
                        "queries_per_s": 1000 / (1 + i)} for i, r in enumerate(runs)},
        "scores": _scores(runs, types, 0.62),
        "comparison": comparison, "corrected": "randomisation",
        "misses": [{"run": r, "k": 10, "rows": [
            {"type": t, "queries": 10, "hit_at_1": 0.5, "hit_at_k": 0.9, "misses": 1,
             "median_rank": 2.0, "lost_to": {"article": 0.4, "screen": 0.6}} for t in types]}
            for r in runs],
        "miss_headline": "screen queries lose to article 60% of the time (minilm)",
        "worst": {"run": "minilm", "depth": 100, "queries": [
            {"type": "article", "qid": "q1", "query": HOSTILE_QUERY, "rank": 7,
             "wanted": item, "winner": winner},
            {"type": "screen", "qid": "q2", "query": "top up", "rank": None,
             "wanted": winner, "winner": None}]},
        "warnings": ["2 queries had no relevant item <ok>"],
    }
    gold = copy.deepcopy(evaluation)
    gold.update(name="gold", label="gold set", silver=False, how="hand-judged",
                scores=_scores(runs, types, 0.55))
    return {
        "format": "trawl-results/1", "title": "Quillfern test report", "trawl_version": "0.1.0",
        "setup": {"catalogue": {"path": "cat.jsonl", "fingerprint": "abcdef0123456789",
                                "items": 120, "types": {t: 30 for t in types}},
                  "metrics": ["ndcg@10", "mrr@10"], "primary": "ndcg@10", "depth": 100,
                  "resamples": 1000, "seed": 0, "alpha": 0.05,
                  "notes": {"fusion": "Reciprocal Rank Fusion, k=60"},
                  "versions": {"trawl": "0.1.0", "numpy": "2.0"}},
        "systems": [{"name": r, "spec": r, "kind": "dense", "fingerprint": "f" * 64,
                     "dimensions": 384, "index_bytes": 700_000, "bytes_per_item": 1536}
                    for r in runs],
        "evaluations": [evaluation, gold],
        "agreement": {"a": "silver", "b": "gold", "a_label": "silver set", "b_label": "gold set",
                      "metric": "ndcg@10", "shared": 0,
                      "tau": {"value": 0.67, "low": 0.33, "high": 1.0},
                      "rho": {"value": 0.8, "low": 0.4, "high": 1.0},
                      "systems": [{"run": r, "score_a": 0.62 - 0.07 * i,
                                   "score_b": 0.55 - 0.05 * i * (-1) ** i,
                                   "rank_a": i + 1.0, "rank_b": 4.0 - i} for i, r in enumerate(runs)],
                      "flips": [{"first": "minilm", "second": "bm25", "diff_a": 0.14,
                                 "diff_b": -0.02}]},
    }


class _Collector(HTMLParser):
    """Tags, attributes, data-cell texts and text, via the standard library's parser."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.tags: list[tuple[str, dict]] = []
        self.cells: dict[str, str] = {}
        self.text: list[str] = []
        self._cell: str | None = None
        self._buf: list[str] = []
        self.stack: list[str] = []

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.append((tag, a))
        if tag not in ("meta", "br", "hr", "img", "link", "input", "col", "wbr"):
            self.stack.append(tag)
        if "data-cell" in a:
            self._cell, self._buf = a["data-cell"], []

    def handle_endtag(self, tag):
        assert self.stack and self.stack[-1] == tag, f"unbalanced </{tag}> after {self.stack[-3:]}"
        self.stack.pop()
        if self._cell is not None and tag in ("td", "strong"):
            self.cells[self._cell] = "".join(self._buf)
            self._cell = None

    def handle_data(self, data):
        self.text.append(data)
        if self._cell is not None:
            self._buf.append(data)


def _parse(page: str) -> _Collector:
    p = _Collector()
    p.feed(page)
    p.close()
    assert p.stack == [], f"unclosed elements: {p.stack}"
    return p


@pytest.fixture(scope="module")
def page() -> str:
    return render_html(sample_bundle())


def test_hostile_text_is_shown_as_text_never_as_markup(page):
    parsed = _parse(page)
    tags = {t for t, _ in parsed.tags}
    assert "script" not in tags and "img" not in tags and "b" not in tags
    text = "".join(parsed.text)
    assert HOSTILE_TITLE in text          # shown literally to the reader
    assert HOSTILE_QUERY in text
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in page


def test_page_cannot_reach_the_network(page):
    parsed = _parse(page)
    for tag, attrs in parsed.tags:
        assert "src" not in attrs, tag
        assert attrs.get("href", "#").startswith("#"), attrs
        assert not any(k.startswith("on") for k in attrs), (tag, attrs)
    assert tags_named(parsed, "link") == [] and tags_named(parsed, "script") == []
    assert "url(" not in page and "@import" not in page and "http://" not in page.replace(
        'xmlns="http://www.w3.org/2000/svg"', "")
    csp = [a["content"] for t, a in parsed.tags if a.get("http-equiv") == "Content-Security-Policy"]
    assert csp and "default-src 'none'" in csp[0]


def tags_named(parsed: _Collector, name: str) -> list[dict]:
    return [a for t, a in parsed.tags if t == name]


def test_every_figure_matches_the_bundle(page):
    bundle = sample_bundle()
    cells = _parse(page).cells
    checked = 0
    for ev in bundle["evaluations"]:
        for s in ev["scores"]:
            if s["metric"] != "ndcg@10":
                continue
            key = f"{ev['name']}|{s['run']}|ndcg@10|{s['type'] or 'all'}"
            assert cells[key] == fmt.num(s["mean"]), key
            checked += 1
        for c in ev["comparison"]:
            key = f"{ev['name']}|{c['run']}|{c['metric']}|all"
            assert cells[key + "|diff"] == fmt.signed(c["diff"])
            assert cells[key + "|p"] == fmt.pvalue(c["p_corrected"])
            checked += 1
    for s in bundle["agreement"]["systems"]:
        assert cells[f"agreement|{s['run']}|a"] == fmt.num(s["score_a"])
        assert cells[f"agreement|{s['run']}|b"] == fmt.num(s["score_b"])
    assert cells["agreement|tau"] == "0.67"
    assert checked == 2 * (4 * 5) + 2 * 6


def test_each_chart_is_valid_svg_followed_by_a_table(page):
    charts = re.findall(r"<figure>.*?</figure>", page, flags=re.S)
    # 2 judgment sets x (quality/latency, per type, difference to the baseline) + agreement
    assert len(charts) == 7
    for fig in charts:
        svg = re.search(r"<svg.*?</svg>", fig, flags=re.S).group(0)
        root = ET.fromstring(svg)  # the standard library's XML parser: well-formed SVG
        assert root.get("role") == "img"
        ns = "{http://www.w3.org/2000/svg}"
        assert root.find(f"{ns}title").text and root.find(f"{ns}desc").text
        assert "<table" in fig.split("</svg>", 1)[1]


def test_silver_results_are_labelled_as_estimates(page):
    text = "".join(_parse(page).text)
    assert "Silver judgments are estimates." in text
    assert "Results: silver set (silver, estimates)" in text
    assert "Results: gold set" in text and "gold set (silver" not in text
    assert "system rankings is 0.67" in text  # measured agreement quoted in the notice


def test_no_silver_notice_without_silver_sets():
    bundle = sample_bundle()
    bundle["evaluations"] = bundle["evaluations"][1:]
    bundle["agreement"] = None
    text = "".join(_parse(render_html(bundle)).text)
    assert "Silver judgments are estimates." not in text


def test_legend_names_the_corrected_test(page):
    text = " ".join("".join(_parse(page).text).split())
    assert "p Holm: the randomisation p-value with Holm's correction" in text


def test_rendering_is_deterministic():
    assert render_html(sample_bundle()) == render_html(sample_bundle())


def _luminance(hex_colour: str) -> float:
    # WCAG 2.1, "relative luminance" definition (w3.org/TR/WCAG21/#dfn-relative-luminance)
    def channel(c: int) -> float:
        s = c / 255
        return s / 12.92 if s <= 0.03928 else ((s + 0.055) / 1.055) ** 2.4
    r, g, b = (int(hex_colour[i:i + 2], 16) for i in (1, 3, 5))
    return 0.2126 * channel(r) + 0.7152 * channel(g) + 0.0722 * channel(b)


def _contrast(a: str, b: str) -> float:
    la, lb = sorted((_luminance(a), _luminance(b)), reverse=True)
    return (la + 0.05) / (lb + 0.05)


def test_text_colours_meet_wcag_contrast():
    # WCAG 2.1 success criterion 1.4.3: at least 4.5:1 for body text.
    colours = dict(re.findall(r"--([a-z]+):(#[0-9a-f]{6})", STYLE))
    for name in ("ink", "muted", "accent"):
        assert _contrast(colours[name], colours["paper"]) >= 4.5, name


def test_palette_is_okabe_ito():
    # Okabe & Ito (2008), "Color Universal Design": the eight published colours.
    assert set(PALETTE) == {"#E69F00", "#56B4E9", "#009E73", "#F0E442", "#0072B2", "#D55E00",
                            "#CC79A7", "#000000"}


def test_axis_ticks():
    assert nice_ticks(0.31, 0.72) == [0.4, 0.5, 0.6, 0.7]
    assert nice_ticks(0, 1) == [0, 0.2, 0.4, 0.6, 0.8, 1.0]
    assert log_ticks(0.03, 12) == [0.05, 0.1, 0.2, 0.5, 1, 2, 5, 10]


def test_a_flip_by_a_rounding_hair_does_not_read_as_a_tie():
    """'ahead under silver by 0.009 but behind under gold by 0.000' contradicted itself
    (the demo's gold scores differed by 0.0001); the gap shows as 'less than 0.001'."""
    bundle = copy.deepcopy(sample_bundle())
    bundle["agreement"]["flips"].append({"first": "minilm", "second": "static",
                                         "diff_a": 0.009, "diff_b": -0.0001})
    text = " ".join(" ".join(_parse(render_html(bundle)).text).split())
    assert ("minilm is ahead of static under silver set by 0.009 but behind under gold set "
            "by less than 0.001") in text
    assert "minilm is ahead of bm25 under silver set by 0.140 but behind under gold set " \
           "by 0.020" in text
    assert "by 0.000" not in text


def test_agreement_says_how_firmly_each_set_holds_the_pairs_that_swap():
    bundle = copy.deepcopy(sample_bundle())
    bundle["agreement"]["flips"][0].update(held_a=0.61, held_b=0.97)
    bundle["agreement"]["firm_pairs"] = {"threshold": 0.9, "pairs": 3, "settled_a": 2,
                                         "swapped_by_b": 0, "settled_b": 1,
                                         "swapped_by_a": 0}
    text = " ".join(" ".join(_parse(render_html(bundle)).text).split())
    assert ("minilm is ahead of bm25 under silver set by 0.140 (in 61% of resamples) but "
            "behind under gold set by 0.020 (in 97% of resamples)") in text
    assert ("Of the 3 pairs of systems, silver set settles 2 (keeps their order in at least "
            "90% of resamples) and gold set swaps 0 of them; gold set settles 1 and silver set "
            "swaps 0 of them.") in text
    assert "noise does not explain" not in text
    assert ("Silver set swaps 0 of the 1 pairs of systems that gold set settles (keeps in "
            "order in at least 90% of bootstrap resamples); a pair you decide on is settled "
            "only by judging real queries (trawl review).") in text
    assert text.index("Silver set swaps 0") < text.index("Agreement: silver set")  # top notice


def test_the_silver_notice_reads_the_silver_side_whichever_side_it_is():
    bundle = copy.deepcopy(sample_bundle())
    ag = bundle["agreement"]
    ag.update(a="gold", b="silver", a_label="gold set", b_label="silver set")
    ag["firm_pairs"] = {"threshold": 0.9, "pairs": 3, "settled_a": 2, "swapped_by_b": 1,
                        "settled_b": 3, "swapped_by_a": 0}
    text = " ".join(" ".join(_parse(render_html(bundle)).text).split())
    assert "Measured against gold set: Kendall's tau" in text
    assert "Silver set swaps 1 of the 2 pairs of systems that gold set settles" in text


def test_systems_table_keeps_ids_whole_and_breaks_specs_between_parts(page):
    """At 1400 px the systems table read '808a05c4ab9' '3' and 'minilm-int' '8': code cells
    broke anywhere. Fingerprints now never break; specs break only between parts."""
    assert re.search(r'<code class="whole">[0-9a-f]{12}</code>', page)
    assert '<code class="parts">minilm-<wbr>int8</code>' in page
    assert "code.whole{white-space:nowrap" in page


def test_column_headers_wrap_between_name_parts_not_inside_words():
    """At 1400 px the per-type table's headers read 'minil m', 'stati c', 'bm2 5': headers
    could break anywhere. They now break only after . - _ @ + / (a <wbr> there), and the
    style no longer lets a header break inside a word."""
    from trawl.report.markup import breakable

    assert breakable("minilm.vectors-binary") == "minilm.<wbr>vectors-<wbr>binary"
    assert breakable("ndcg@10") == "ndcg@<wbr>10"
    assert breakable("a<b") == "a&lt;b"  # still escaped
    assert breakable("static") == "static"
    assert breakable("within 0.01") == "within 0.01"  # a decimal point is no break
    assert "overflow-wrap:anywhere" not in STYLE.split("table.data thead th{", 1)[1] \
        .split("}", 1)[0]
    page = render_html(sample_bundle())
    assert "<th scope=\"col\" class=\"num\">ndcg@<wbr>10</th>" in page


def test_a_long_legend_wraps_inside_the_chart():
    """The per-type chart's legend was one row: with the demo's nine systems it ran past
    the chart's right edge and cut 'minilm.vectors-int8' to 'minilm.vectors-i'. Every
    legend name now ends inside the chart and the bars start below the legend."""
    from trawl.report.charts import CHAR_PX, Bar, BarGroup, grouped_bars, look

    names = ["minilm", "minilm-int8", "minilm-onnx", "minilm-onnx-int8", "minilm.vectors-int8",
             "minilm.vectors-binary", "static", "bm25", "minilm+bm25"]
    groups = [BarGroup(t, tuple(Bar(n, 0.6, 0.5, 0.7, look(i)) for i, n in enumerate(names)))
              for t in ("article", "faq")]
    root = ET.fromstring(grouped_bars(groups, "ndcg@10", "c", "t"))
    ns = "{http://www.w3.org/2000/svg}"
    width = float(root.get("width"))
    legend = [t for t in root.iter(f"{ns}text") if t.text in names]
    assert [t.text for t in legend] == names
    ends = [float(t.get("x")) + CHAR_PX * len(t.text) for t in legend]
    assert max(ends) <= width
    rows = sorted({float(t.get("y")) for t in legend})
    assert len(rows) > 1
    bars = [float(r.get("y")) for r in root.iter(f"{ns}rect") if r.get("class") == "bar"]
    assert min(bars) > rows[-1]


def test_point_labels_keep_off_other_markers_and_sit_under_them():
    """In the demo's agreement chart 'static' was written under the bm25 marker drawn
    after it, and in the latency chart whiskers crossed labels. Labels now avoid other
    markers where a nearby row allows, and are drawn after whiskers, before markers."""
    from trawl.report.charts import CHAR_PX, FONT_PX, Point, agreement_scatter, look

    points = [Point("static", 0.477, 0.587, 0.587, 0.587, look(0)),  # the demo's figures
              Point("bm25", 0.507, 0.583, 0.583, 0.583, look(1)),
              Point("minilm", 0.665, 0.729, 0.729, 0.729, look(2))]
    svg = agreement_scatter(points, "x", "y", "c", "t")
    root = ET.fromstring(svg)
    ns = "{http://www.w3.org/2000/svg}"
    labels = {t.text: (float(t.get("x")), float(t.get("y"))) for t in root.iter(f"{ns}text")
              if t.get("class") == "point-label"}
    centres = []  # every marker's centre: circle (cx, cy), square (x + w/2, y + h/2)
    for g in root.iter(f"{ns}g"):
        if g.get("class") == "point":
            shape = next(iter(g))
            if shape.get("cx") is not None:
                centres.append((float(shape.get("cx")), float(shape.get("cy"))))
            elif shape.get("width") is not None:
                centres.append((float(shape.get("x")) + float(shape.get("width")) / 2,
                                float(shape.get("y")) + float(shape.get("height")) / 2))
    assert len(centres) == 2  # the circle and the square; the triangle is a polygon
    for name, (lx, ly) in labels.items():
        for cx, cy in centres:
            inside = lx - 4 <= cx <= lx + CHAR_PX * len(name) and ly - FONT_PX <= cy <= ly + 2
            assert not inside, f"label {name!r} covers a marker at {cx, cy}"
    assert svg.index('class="point-labels"') < svg.index('class="point"')


def test_identical_systems_stand_side_by_side_instead_of_hiding_each_other():
    """Two systems with the same scores (an index rebuilt under a second name) drew one
    marker exactly over the other: the chart showed one system where the table had two."""
    from trawl.report.charts import DODGE_PX, Point, agreement_scatter, look, quality_latency

    ns = "{http://www.w3.org/2000/svg}"

    def centres(svg: str) -> list[tuple[float, float]]:
        """Every marker's centre: circles, squares and triangles."""
        out = []
        for g in ET.fromstring(svg).iter(f"{ns}g"):
            if g.get("class") not in ("point", "markers"):
                continue
            for shape in g:
                if shape.tag == f"{ns}circle":
                    out.append((float(shape.get("cx")), float(shape.get("cy"))))
                elif shape.tag == f"{ns}rect":
                    w, h = float(shape.get("width")), float(shape.get("height"))
                    out.append((float(shape.get("x")) + w / 2, float(shape.get("y")) + h / 2))
                elif shape.tag == f"{ns}polygon":
                    xy = [tuple(map(float, v.split(","))) for v in shape.get("points").split()]
                    out.append((sum(v[0] for v in xy) / 3, max(v[1] for v in xy)))
        return out

    twins = [Point("bm25", 0.507, 0.583, 0.55, 0.61, look(0)),
             Point("bm25-copy", 0.507, 0.583, 0.55, 0.61, look(2)),
             Point("minilm", 0.665, 0.729, 0.70, 0.75, look(1))]
    for svg in (agreement_scatter(twins, "x", "y", "c", "t"),
                quality_latency([Point(p.label, 3.0 if p.label != "minilm" else 20.0,
                                       p.y, p.low, p.high, p.look) for p in twins],
                                "ndcg@10", "c", "t")):
        (bm25, copy, minilm) = centres(svg)
        assert copy[0] - bm25[0] == pytest.approx(DODGE_PX)  # side by side, in order
        assert abs(copy[1] - bm25[1]) < 6  # the triangle's base is not its centre
        assert minilm[0] - bm25[0] > 50  # points elsewhere keep their place
