"""The stylesheet inlined in report.html: print-friendly, colour-blind-safe marks
(blue better, vermilion worse), and no external fonts or images."""

STYLE = """
:root{--paper:#fbf8f1;--ink:#1b2b34;--muted:#5b6770;--rule:#d9d2c3;--accent:#1f6f78;
--up:#0072B2;--down:#D55E00;--silver:#8a8f96;--gold:#9a6b00}
*{box-sizing:border-box}
html{background:var(--paper);color:var(--ink)}
body{margin:0 auto;max-width:64rem;padding:1.5rem 1.25rem 3rem;
font:15px/1.5 system-ui,-apple-system,"Segoe UI",Roboto,"Noto Sans",sans-serif}
code{font:0.86em ui-monospace,"SF Mono",Menlo,Consolas,monospace;background:#efe9dc;
padding:0 .25em;border-radius:3px;word-break:break-all}
code.whole{white-space:nowrap;word-break:normal}
code.parts{word-break:normal}
.masthead{border-bottom:3px double var(--rule);padding-bottom:.75rem;margin-bottom:1rem}
.kicker{margin:0;text-transform:uppercase;letter-spacing:.12em;font-size:.75rem;color:var(--accent);
font-weight:700}
h1{font:700 1.9rem/1.2 Georgia,"Times New Roman",serif;margin:.2rem 0 .4rem}
h2{font:700 1.35rem/1.25 Georgia,"Times New Roman",serif;margin:2.2rem 0 .6rem;
border-top:1px solid var(--rule);padding-top:1rem;display:flex;gap:.6rem;align-items:baseline}
h3{font-size:1.02rem;margin:1.6rem 0 .4rem;color:var(--accent)}
h4{font-size:.95rem;margin:1rem 0 .2rem}
.secno{font:700 .85rem/1 system-ui,sans-serif;color:var(--paper);background:var(--accent);
border-radius:999px;min-width:1.6rem;height:1.6rem;display:inline-flex;align-items:center;
justify-content:center}
.lede{margin:0;color:var(--muted)}
.notice{border-left:5px solid var(--silver);background:#f1efea;padding:.6rem .8rem;margin:.8rem 0 0}
nav ol{display:flex;flex-wrap:wrap;gap:.3rem 1.2rem;padding:0;margin:0 0 .5rem;list-style:none;
counter-reset:c}
nav li{counter-increment:c}nav li::before{content:counter(c) ". ";color:var(--muted)}
a{color:var(--accent)}
.badge{display:inline-block;font-size:.75rem;font-weight:700;padding:.05rem .5rem;border-radius:999px;
border:1px solid currentColor;white-space:nowrap}
.badge.silver{color:#4f555c;background:repeating-linear-gradient(135deg,#eceef0 0 6px,#e2e5e8 6px 12px)}
.badge.human{color:var(--gold);background:#fbf1d8}
.badge.unknown{color:#4f555c;background:#eceef0}
.settings,.terms{display:grid;grid-template-columns:max-content 1fr;gap:.15rem 1rem;margin:.5rem 0}
dt{font-weight:600;color:var(--muted)}dd{margin:0}
.pair{display:flex;flex-wrap:wrap;gap:0 2rem}
.table-wrap{overflow-x:auto;margin:.4rem 0 .8rem}
table.data{border-collapse:collapse;font-size:.86rem;font-variant-numeric:tabular-nums}
table.data caption{text-align:left;font-size:.8rem;color:var(--muted);padding-bottom:.25rem}
table.data th,table.data td{padding:.22rem .6rem;border-bottom:1px solid var(--rule);
text-align:left;vertical-align:top}
table.data thead th{border-bottom:2px solid var(--ink);font-weight:600;white-space:normal;
overflow-wrap:break-word}
table.data tbody th{font-weight:500}
.num{text-align:right!important;white-space:nowrap}
.compact td,.compact th{padding:.15rem .45rem}
.mark{font-size:1rem;text-align:center}.mark.up{color:var(--up)}.mark.down{color:var(--down)}
.mark.flat{color:var(--muted)}
.swatch{display:inline-block;width:.8rem;height:.8rem;margin-right:.4rem;background:var(--c);
vertical-align:-.05rem;border:1px solid #fff;outline:1px solid var(--c)}
.swatch.m-circle{border-radius:50%}
.swatch.m-triangle{clip-path:polygon(50% 0,100% 100%,0 100%)}
.swatch.m-down{clip-path:polygon(0 0,100% 0,50% 100%)}
.swatch.m-diamond{clip-path:polygon(50% 0,100% 50%,50% 100%,0 50%)}
.swatch.m-cross{clip-path:polygon(35% 0,65% 0,65% 35%,100% 35%,100% 65%,65% 65%,65% 100%,35% 100%,35% 65%,0 65%,0 35%,35% 35%)}
figure{margin:.5rem 0 1rem}
figcaption{font-size:.82rem;color:var(--muted);margin:.2rem 0 .3rem}
.chart-wrap{overflow-x:auto}
svg.chart{max-width:100%;height:auto;background:#fffdf8;border:1px solid var(--rule)}
svg .axis{stroke:var(--ink);stroke-width:1}
svg .grid{stroke:var(--rule);stroke-width:.6;stroke-dasharray:2 3}
svg .tick{font-size:11px;fill:var(--muted)}
svg .axis-label{font-size:12px;fill:var(--ink)}
svg .point-label,svg .group-label{font-size:12px;fill:var(--ink)}
svg .point-label{paint-order:stroke;stroke:#fffdf8;stroke-width:3px;stroke-linejoin:round}
svg .whisker{stroke-width:1.6}
svg .whisker-dark{stroke:var(--ink);stroke-width:1.3}
svg .bar{stroke:var(--ink);stroke-width:.4}
svg .diagonal{stroke:var(--muted);stroke-dasharray:5 4}
.legend{font-size:.82rem;color:var(--muted)}
svg .margin-band{fill:#1f6f78;fill-opacity:.12}
svg .zero{stroke:var(--ink);stroke-width:1}
.decision{border:2px solid var(--accent);background:#fffdf8;padding:.6rem 1rem .4rem;margin:.8rem 0}
.decision h2{border:none;margin:0 0 .3rem;padding:0}
.verdict{font:700 1.15rem/1.35 Georgia,"Times New Roman",serif;margin:.2rem 0 .4rem}
.decision .caution{border-left:5px solid var(--silver);background:#f1efea;padding:.4rem .7rem}
details{margin:.4rem 0 .8rem}summary{cursor:pointer;color:var(--accent);font-weight:600}
.headline{font-size:1.05rem}
.warnings{font-size:.85rem;color:#7a4100}
.worst q{font-style:italic}.worst .qid{font-size:.75rem;color:var(--muted)}
.item .type{font-size:.7rem;text-transform:uppercase;letter-spacing:.06em;color:var(--muted)}
.item .title{font-weight:600}
.snippet{margin:.1rem 0 0;font-size:.8rem;color:var(--muted);max-width:26rem}
.how{color:var(--muted);font-size:.82rem}
footer{margin-top:3rem;border-top:1px solid var(--rule);padding-top:.6rem;font-size:.8rem;
color:var(--muted)}
@media print{html,body{background:#fff}body{max-width:none;font-size:11pt;padding:0}
nav{display:none}section{break-inside:auto}figure,.block,table{break-inside:avoid}
h2,h3{break-after:avoid}a{color:inherit;text-decoration:none}
svg.chart{border:none}.notice{border:1px solid #999}
.badge.silver{background:none}}
"""
