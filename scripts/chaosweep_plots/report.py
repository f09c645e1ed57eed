"""OUTDIR/report.html: one self-contained page (figures embedded as base64 PNG, no external
resources) with the campaign's spec, the summary table and the figures.

The summary table is built here from the archive's own datasets (/ensemble/*, /response/*),
read with h5py; no number is recomputed. With --chaosweep PROGRAM the page also carries the
verbatim text of `PROGRAM summary ARCHIVE --format table`.
"""
import base64
import html
import math

import numpy as np

CAUTION = ("These are idealised low-order models of forced chaotic dynamics: their "
           "\u201cforcing\u201d, \u201cwarming\u201d and \u201cregimes\u201d are analogues, and "
           "nothing here is a projection of the real climate.")

STYLE = """
body { font-family: sans-serif; max-width: 1240px; margin: 1em auto; padding: 0 1em;
       color: #222; }
h1 { font-size: 1.5em; } h2 { border-bottom: 1px solid #ccc; margin-top: 1.6em; }
.caution { background: #fff6dd; border-left: 4px solid #e0a800; padding: 0.5em 0.8em; }
table { border-collapse: collapse; font-size: 0.9em; margin: 0.3em 0 1em 0; }
p.table-title { font-size: 0.9em; font-weight: bold; margin: 0.8em 0 0.2em 0; }
th, td { border: 1px solid #ccc; padding: 0.2em 0.5em; text-align: right;
         font-variant-numeric: tabular-nums; }
th { background: #f0f0f0; } div.wide { overflow-x: auto; } td.name { text-align: left; }
figure { margin: 1.2em 0; } figure img { max-width: 100%; border: 1px solid #ddd; }
figcaption { font-size: 0.9em; color: #444; }
pre { background: #f6f6f6; padding: 0.6em; overflow-x: auto; font-size: 0.85em; }
dl.meta dt { float: left; clear: left; width: 10em; font-weight: bold; }
dl.meta dd { margin-left: 11em; }
"""


def estimate_text(mean, lo, hi):
    """'mean [low, high]' with a precision suited to the interval's width (two significant
    digits of the half-width), as `chaosweep summary --format table` prints it."""
    if not math.isfinite(mean):
        return "n/a"
    half = 0.5 * (hi - lo)
    digits = 3
    if math.isfinite(half) and half > 0:
        digits = max(1, min(6, 2 - int(math.floor(math.log10(half)))))
    if not math.isfinite(half):
        return f"{mean:.{digits}f}"
    return f"{mean:.{digits}f} [{lo:.{digits}f}, {hi:.{digits}f}]"


def _cell(text, cls=None):
    return f"<td class=\"{cls}\">{html.escape(text)}</td>" if cls else \
        f"<td>{html.escape(text)}</td>"


def _estimates_table(arch, caption, names, mean, ci, unit):
    head = "".join(f"<th>{html.escape(a)} (model units)</th>" for a in arch.axes)
    head += "<th>valid / total members</th>"
    head += "".join(f"<th>{html.escape(n)} ({unit})</th>" for n in names)
    rows = []
    for c in range(arch.cases):
        cells = [_cell(str(c))]
        cells += [_cell(f"{arch.axis_values[a][c]:g}") for a in arch.axes]
        cells.append(_cell(f"{arch.valid[c]} / {arch.members}"))
        cells += [_cell(estimate_text(mean[c, k], ci[c, k, 0], ci[c, k, 1]))
                  for k in range(len(names))]
        rows.append("<tr>" + "".join(cells) + "</tr>")
    return (f"<p class=\"table-title\">{html.escape(caption)}</p><div class=\"wide\">"
            f"<table class=\"summary\"><tr><th>case</th>{head}</tr>\n" + "\n".join(rows)
            + "</table></div>")


def _slope_table(arch):
    rows = []
    for a, axis in enumerate(arch.axes):
        for o, name in enumerate(arch.observables):
            s, e = arch.slope[a, o], arch.slope_stderr[a, o]
            text = "n/a" if not np.isfinite(s) else f"{s:.4g} \u00b1 {e:.2g}"
            rows.append(f"<tr>{_cell(name, 'name')}{_cell(axis, 'name')}{_cell(text)}</tr>")
    return ("<p class=\"table-title\">Response slope of the ensemble time mean (least squares "
            "over the cases, \u00b1 standard error from the ensemble sampling error); model "
            "units per unit of the parameter</p><table class=\"slopes\">"
            "<tr><th>observable</th><th>parameter</th><th>slope \u00b1 standard error</th></tr>"
            + "\n".join(rows) + "</table>")


def summary_html(arch):
    parts = [_estimates_table(arch, "Time mean: ensemble mean [95% confidence interval of the "
                              "mean, Student t]", arch.observables, arch.mean, arch.mean_ci,
                              "model units")]
    if arch.regime is not None:
        parts.append(_estimates_table(arch, "Regime fraction: share of time in each regime, "
                                      "ensemble mean [95% confidence interval of the mean]",
                                      arch.regimes, arch.regime, arch.regime_ci, "fraction"))
    if arch.slope is not None:
        parts.append(_slope_table(arch))
    return "\n".join(parts)


def _image(path):
    with open(path, "rb") as f:
        return "data:image/png;base64," + base64.b64encode(f.read()).decode("ascii")


def write_report(arch, path, results, program_table=None):
    from .figures import Figure
    figures = [r for r in results if isinstance(r, Figure)]
    skipped = [r for r in results if not isinstance(r, Figure)]
    e = html.escape
    out = ["<!DOCTYPE html>", "<html lang=\"en\"><head><meta charset=\"utf-8\">",
           f"<title>{e(arch.campaign)}: chaosweep report</title>",
           f"<style>{STYLE}</style></head><body>",
           f"<h1>Campaign {e(arch.campaign)}</h1>",
           f"<p class=\"caution\"><strong>Caution.</strong> {e(CAUTION)}</p>",
           "<dl class=\"meta\">",
           f"<dt>description</dt><dd>{e(arch.description) or '&ndash;'}</dd>",
           f"<dt>model</dt><dd>{e(arch.model)}</dd>",
           f"<dt>cases</dt><dd>{arch.cases} \u00d7 {arch.members} members; "
           f"{e(arch.valid_text())}</dd>",
           f"<dt>swept</dt><dd>{e(', '.join(arch.axes)) or 'nothing (one case)'}</dd>",
           f"<dt>archive</dt><dd>{e(arch.path)} (status {e(arch.status)}, "
           f"written {e(arch.created_utc)} on {arch.ranks} ranks, chaosweep "
           f"{e(arch.tool_version)})</dd>",
           "<dt>units</dt><dd>nondimensional: model units; time in model time units</dd>",
           "</dl>"]
    if arch.status != "complete":
        out.append(f"<p class=\"caution\">The archive's status is {e(arch.status)}: "
                   f"it is not a complete campaign.</p>")

    out.append("<h2 id=\"summary\">Summary</h2>")
    out.append(summary_html(arch))
    if program_table is not None:
        out.append("<details><summary>as printed by <code>chaosweep summary --format "
                   "table</code></summary>")
        out.append(f"<pre class=\"program-summary\">{e(program_table)}</pre></details>")

    out.append("<h2 id=\"figures\">Figures</h2>")
    for fig in figures:
        out.append(f"<figure id=\"{e(fig.name)}\"><img src=\"{_image(fig.path)}\" "
                   f"alt=\"{e(fig.title)}\"><figcaption><strong>{e(fig.name)}.png</strong> "
                   f"{e(fig.caption)}</figcaption></figure>")
    if skipped:
        out.append("<p>Not drawn for this campaign:</p><ul class=\"skipped\">")
        out += [f"<li>{e(s.name)}: {e(s.reason)}</li>" for s in skipped]
        out.append("</ul>")

    out.append("<h2 id=\"spec\">Campaign spec</h2>")
    out.append("<p>As stored in the archive (root attribute <code>spec_yaml</code>, SHA-256 "
               "recorded beside it).</p>")
    out.append(f"<pre class=\"spec\">{e(arch.spec_yaml)}</pre>")
    out.append("</body></html>")
    with open(path, "w", encoding="utf-8") as f:
        f.write("\n".join(out) + "\n")
