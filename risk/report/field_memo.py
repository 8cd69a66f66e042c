"""The field summary memo of ``risk batch``: ranked wells, the field's envelope, a chart of the
sand-free limit per well and stage, the inputs that matter across the field, the failed cases,
assumptions and the safety cautions (HTML, self-contained, and its PDF).

Pure rendering of the dict :func:`risk.batch.summary.files` assembles; numbers carry units.
"""

from __future__ import annotations

import base64
import io
from collections.abc import Mapping
from typing import Any, Final

from risk.report.memo.texts import CAUTIONS

__all__ = ["field_memo", "ASSUMPTIONS"]

ASSUMPTIONS: Final[tuple[str, ...]] = (
    "Each case is a complete scenario: the field's defaults with that well's and interval's "
    "overrides (or its own scenario file). Its own memo, in its subfolder, states the "
    "assumptions and limitations of its models; they all apply here.",
    "The sand-free limit of a case is the drawdown at which the probability that any enabled "
    "sand-production mechanism predicts sand reaches that case's accepted risk, capped at the "
    "reservoir pressure. Cases with different accepted risks are not ranked on equal terms.",
    "Wells are ranked by their smallest sand-free limit over their depletion stages; the "
    "field envelope is, at each reservoir pressure evaluated, the smallest limit among the "
    "cases whose stages span it, linear between a case's own stages and never extrapolated.",
    "Inputs that matter: how often an input ranks among the first three of a case for the "
    "mechanism governing its first stage. The indices of different cases describe different "
    "models and are not added; the count shows a pattern, not a field-wide sensitivity.",
    "Cases share the seed unless they set their own: common random numbers make the "
    "differences between wells sharper, but the cases' sampling errors are correlated.",
    "Limits are estimates from a finite sample; each case's one-sided 95% lower bound is "
    "given beside its limit. Use the bound where the two differ.",
)

_TEMPLATE: Final = """<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>{{ title }}</title>
<style>
body { font-family: "DejaVu Sans", Arial, sans-serif; font-size: 10pt; margin: 1.5em;
       color: #222; }
h1 { font-size: 15pt; } h2 { font-size: 12pt; margin-top: 1.4em; }
table { border-collapse: collapse; margin: 0.5em 0; }
th, td { border-bottom: 1px solid #ccc; padding: 2px 8px; text-align: left; }
td.n, th.n { text-align: right; }
.caution { border: 1px solid #b22; padding: 0.4em 0.8em; background: #fff4f4; }
img { max-width: 100%; }
@page { size: A4; margin: 15mm; }
</style></head><body>
<h1>{{ title }}</h1>
<p>Field file {{ field_file }} &middot; risk {{ version }} &middot; {{ run_date }} &middot;
{{ batch.computed }} case(s) computed, {{ batch.reused }} reused unchanged,
{{ batch.failed }} failed.</p>
<div class="caution"><strong>Safety cautions.</strong><ul>
{% for c in cautions %}<li>{{ c }}</li>{% endfor %}</ul></div>

<h2>Wells ranked by their sand-free drawdown limit</h2>
{% if ranking %}
<table><tr><th>Rank</th><th>Case</th><th class="n">Smallest limit [{{ unit }}]</th>
<th class="n">95% lower bound [{{ unit }}]</th><th class="n">at reservoir pressure
[{{ unit }}]</th><th>Governing mechanism</th><th class="n">Highest P(sand) at a planned
point [%]</th><th class="n">Accepted risk [%]</th></tr>
{% for r in ranking %}<tr><td>{{ loop.index }}</td><td>{{ r.case }}</td>
<td class="n">{{ r.limit_text }}</td><td class="n">{{ r.lower_text }}</td>
<td class="n">{{ r.p_text }}</td><td>{{ r.governing }}</td><td class="n">{{ r.planned_text }}</td>
<td class="n">{{ r.risk_text }}</td></tr>
{% endfor %}</table>
{% else %}<p>No case has a sand-free limit (no sand-production mechanism enabled, or every
case failed).</p>{% endif %}

<h2>Sand-free limit per well and stage</h2>
{% if chart %}<img src="{{ chart }}" alt="Sand-free drawdown limit per case and depletion
stage">{% endif %}

<h2>The field's envelope</h2>
{% if envelope %}
<table><tr><th class="n">Reservoir pressure [{{ unit }}]</th><th class="n">Smallest sand-free
limit [{{ unit }}]</th><th>Case</th></tr>
{% for e in envelope %}<tr><td class="n">{{ e.p_text }}</td><td class="n">{{ e.limit_text }}</td>
<td>{{ e.case }}</td></tr>{% endfor %}</table>
{% if envelope_chart %}<img src="{{ envelope_chart }}" alt="Sand-free limit against reservoir
pressure per case, and the field envelope">{% endif %}
{% else %}<p>No envelope: no case has a sand-free limit.</p>{% endif %}

<h2>Inputs that matter across the field</h2>
{% if inputs %}
<table><tr><th>Input</th><th class="n">Cases where it ranks in the first three</th>
<th class="n">Cases with indices</th><th class="n">Mean index [-]</th></tr>
{% for r in inputs %}<tr><td>{{ r.input }}</td><td class="n">{{ r.cases_top }}</td>
<td class="n">{{ r.cases }}</td><td class="n">{{ r.mean_text }}</td></tr>{% endfor %}</table>
{% else %}<p>No sensitivity indices (fewer than two uncertain inputs, or too few samples).</p>
{% endif %}

<h2>Cases</h2>
<table><tr><th>Case</th><th>Status</th><th>Outputs</th><th>Message</th></tr>
{% for c in batch.cases %}<tr><td>{{ c.case }}</td>
<td>{{ "reused" if c.reused else ("computed" if c.ok else "FAILED") }}</td>
<td>{{ c.folder if c.ok else "" }}</td><td>{{ c.message or "" }}</td></tr>{% endfor %}
</table>

<h2>Assumptions and limitations</h2>
<ul>{% for a in assumptions %}<li>{{ a }}</li>{% endfor %}</ul>
</body></html>
"""


def _num(v: Any, digits: int = 4) -> str:
    return "-" if v is None else f"{float(v):,.{digits}g}"


def _pct(v: Any) -> str:
    return "-" if v is None else f"{100 * float(v):.3g}"


def _png(fig: Any) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=110, metadata={"Software": None})
    return buf.getvalue()


def _charts(ctx: Mapping[str, Any]) -> dict[str, bytes]:
    """The limit per case and stage (cases in rank order), and limit against reservoir
    pressure per case with the field envelope."""
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib.figure import Figure

    ranking = ctx["ranking"]
    if not ranking:
        return {}
    unit = ctx["unit"]
    n = len(ranking)
    fig = Figure(figsize=(7.0, max(2.0, 0.28 * n + 1.2)))
    ax = fig.add_subplot()
    stages = max(len(r["limits"]) for r in ranking)
    cmap = matplotlib.colormaps["viridis"]
    for k in range(stages):
        ys = [i for i, r in enumerate(ranking) if k < len(r["limits"])]
        xs = [ranking[i]["limits"][k] for i in ys]
        ax.scatter(xs, ys, s=22, color=cmap(k / max(1, stages - 1)), label=f"stage {k + 1}",
                   zorder=3)
    ax.set_yticks(range(n), [r["case"] for r in ranking], fontsize=7)
    ax.invert_yaxis()
    ax.set_xlabel(f"sand-free drawdown limit [{unit}]")
    ax.grid(axis="x", alpha=0.3)
    ax.legend(fontsize=7, loc="upper left", bbox_to_anchor=(1.01, 1.0), title="stage",
              title_fontsize=7)
    fig.tight_layout()
    out = {"field_limits": _png(fig)}
    env = ctx["envelope"]
    if env:
        fig2 = Figure(figsize=(7.0, 3.6))
        ax2 = fig2.add_subplot()
        for r in ranking:
            pairs = sorted(zip(r["pressures"], r["limits"], strict=True))
            ax2.plot([a for a, _ in pairs], [b for _, b in pairs], color="0.7", lw=0.8,
                     marker=".", ms=3)
        ax2.plot([e["reservoir_pressure"] for e in env], [e["limit"] for e in env],
                 color="#b22", lw=2, label="field envelope (smallest limit)")
        ax2.set_xlabel(f"reservoir pressure [{unit}]")
        ax2.set_ylabel(f"sand-free limit [{unit}]")
        ax2.invert_xaxis()  # depletion runs left to right
        ax2.grid(alpha=0.3)
        ax2.legend(fontsize=7)
        fig2.tight_layout()
        out["field_envelope"] = _png(fig2)
    return out


def field_memo(ctx: Mapping[str, Any]) -> dict[str, str | bytes]:
    """``field_memo.html``, ``field_memo.pdf`` and ``figures/field_*.png`` of a batch."""
    from jinja2 import Environment

    from risk.report.memo.render import render_pdf

    charts = _charts(ctx)
    uri = {k: "data:image/png;base64," + base64.b64encode(v).decode("ascii")
           for k, v in charts.items()}
    ranking = [{**r, "limit_text": _num(r["limit"]), "lower_text": _num(r["lower"]),
                "p_text": _num(r["reservoir_pressure"]), "planned_text": _pct(r["p_planned_max"]),
                "risk_text": _pct(r["accepted_risk"])} for r in ctx["ranking"]]
    envelope = [{**e, "p_text": _num(e["reservoir_pressure"]), "limit_text": _num(e["limit"])}
                for e in ctx["envelope"]]
    inputs = [{**r, "mean_text": _num(r["mean_index"], 2)} for r in ctx["inputs"]]
    html = Environment(autoescape=True).from_string(_TEMPLATE).render(
        {**ctx, "ranking": ranking, "envelope": envelope, "inputs": inputs,
         "chart": uri.get("field_limits"), "envelope_chart": uri.get("field_envelope"),
         "cautions": CAUTIONS, "assumptions": ASSUMPTIONS})
    files: dict[str, str | bytes] = {"field_memo.html": html, "field_memo.pdf": render_pdf(html)}
    files.update({f"figures/{k}.png": v for k, v in charts.items()})
    return files
