"""The report of a run: one self-contained HTML file (figures embedded) and a Markdown
summary, with the fitted coefficients, per-plate misfits, the hypothesis ranking and the
cautions."""

from __future__ import annotations

import base64
import html
from pathlib import Path

from .diagnostics import chi_square_summary, fits_disagree, frame_summary
from .io.files import atomic_write

CAUTION = ("These are model-dependent research estimates. They depend on the plate model, "
           "the cooling model, the hypothesis and the observed motions, and are not inputs "
           "to hazard assessment or engineering decisions.")


def _fmt(v, digits=4):
    if v is None:
        return "-"
    if isinstance(v, str):
        return v
    if v == 0:
        return "0"
    if abs(v) >= 1e4 or abs(v) < 1e-3:
        return f"{v:.{digits - 1}e}"
    return f"{v:.{digits}g}"


def _tables(run: dict) -> list:
    """(title, header, rows, note) for every table of the report."""
    out = []
    if run.get("truth"):
        t = run["truth"]
        out.append(("Synthetic data: what made the observed motions",
                    ["term", "true coefficient"],
                    [[k, _fmt(v)] for k, v in t["true_coefficients"].items()],
                    f"Hypothesis: {t['hypothesis']}. Noise: {t['noise_deg_myr_per_component']} "
                    "deg/Myr (one standard deviation) on each Cartesian component of each "
                    "Euler vector."))
    rows = [[str(i + 1), r["name"], _fmt(r["cv_rms_mm_yr"]),
             _fmt(r.get("cv_stderr_mm_yr")), "yes" if r.get("within_one_se") else "no",
             _fmt(r["rms_velocity_mm_yr"]), _fmt(100 * r["variance_reduction"]),
             str(r["free"]), f"{r['aic']:.1f}", f"{r['bic']:.1f}"]
            for i, r in enumerate(run["rank"])]
    out.append(("Hypotheses, best first (by cross-validation)",
                ["rank", "hypothesis", "CV misfit mm/yr", "± se", "within 1 se of best",
                 "RMS misfit mm/yr", "variance reduction %", "free", "AIC", "BIC"], rows,
                "CV: leave-one-plate-out cross-validation error, with its standard error "
                "over plates; a hypothesis within one standard error of the best (paired over "
                "plates) cannot be told apart from it by these data. AIC and BIC come from "
                "the effective numbers of observations and parameters."))
    fits = list(run["fits"].items()) + list(run.get("other_fits", {}).items())
    for name, fit in fits:
        rows = []
        truth = (run.get("truth") or {}).get("true_coefficients", {})
        for label, c in fit.coefficients.items():
            interval = (f"{_fmt(c.profile_low)} to {_fmt(c.profile_high)}"
                        if c.free and c.profile_high is not None else "")
            rows.append([label, _fmt(c.value),
                         _fmt(c.stderr) if c.free else "fixed", interval,
                         _fmt(c.torque_space_value) if c.free else "",
                         c.unit, _fmt(truth.get(label)) if truth and
                         fit.hypothesis == run["truth"]["hypothesis"] else ""])
        out.append((f"Fitted coefficients: {name}",
                    ["term", "value (velocity space)", "std. error", "95 % profile interval",
                     "torque space", "unit", "true"], rows, _fit_note(fit)))
    best = run["fits"][run["rank"][0]["name"]]
    rows = [[p["plate"], f"{p['observed']['lat']:.2f}, {p['observed']['lon']:.2f}",
             _fmt(p["observed"]["rate"]),
             f"{p['predicted']['lat']:.2f}, {p['predicted']['lon']:.2f}",
             _fmt(p["predicted"]["rate"]), _fmt(p["pole_distance_deg"]),
             _fmt(p["rms_velocity_mm_yr"])] for p in best.plates]
    out.append((f"Per-plate fit of the best hypothesis ({best.hypothesis})",
                ["plate", "observed pole (lat, lon)", "rate deg/Myr", "predicted pole",
                 "rate deg/Myr", "pole distance deg", "RMS misfit mm/yr"], rows, None))
    return out


def _fit_note(fit):
    """What a reader of a fit's table must know: a warning that the fit is circular,
    coefficients at a bound, what was minimised (and the chi-square), the mantle frame and
    net rotation, and the profile and resampled 95 % intervals (None if nothing)."""
    parts = []
    for note in fit.notes:
        if note.startswith("circular:"):
            parts.append("Warning: " + note[len("circular:"):].strip() + ".")
    parts += [f"Warning: {w}." for w in fits_disagree(fit.as_dict())]
    for label, c in fit.coefficients.items():
        if c.at_bound:
            parts.append(f"Warning: {label} is at its {c.at_bound} bound; its standard error "
                         "does not describe its uncertainty (read the profile interval).")
    m = fit.misfit
    if m.get("misfit_measure"):
        parts.append(f"Minimised: {m['misfit_measure']}.")
    for line in (chi_square_summary(m), frame_summary(fit.frame) if fit.frame else None):
        if line:
            parts.append(line[0].upper() + line[1:] + ".")
    spans = [f"{label} {_fmt(c.profile_low)} to {_fmt(c.profile_high)}"
             for label, c in fit.coefficients.items() if c.free and c.profile_high is not None]
    if spans:
        parts.append(f"Profile-likelihood 95 % intervals: {', '.join(spans)}.")
    for method, u in (fit.uncertainty or {}).items():
        spans = ", ".join(f"{label} {_fmt(c['p2_5'])} to {_fmt(c['p97_5'])}"
                          for label, c in u["coefficients"].items())
        parts.append(f"{method.replace('_', ' ').capitalize()} ({u['members']} members, "
                     f"{u.get('fit', 'torque')}-space refits), 95 % intervals: {spans}.")
    return " ".join(parts) or None


def write_markdown(path, run: dict) -> None:
    """The report's summary as Markdown (tables, figure links), atomically.

    Parameters
    ----------
    path : str or Path
    run : dict
        ``world``, ``summary``, ``truth``, ``rank`` rows, ``fits`` (FitResult by
        hypothesis), ``figures`` (title, relative path).
    """
    lines = [f"# torque report: {run['world']}", "", f"> **Caution.** {CAUTION}", ""]
    lines += [f"- {s}" for s in run.get("summary", [])] + [""]
    for title, header, rows, note in _tables(run):
        lines += [f"## {title}", "", "| " + " | ".join(header) + " |",
                  "|" + "---|" * len(header)]
        lines += ["| " + " | ".join(r) + " |" for r in rows]
        lines += (["", note] if note else []) + [""]
    if run.get("figures"):
        lines += ["## Figures", ""]
        for title, fig in run["figures"]:
            lines += [f"### {title}", "", f"![{title}]({fig})", ""]
    with atomic_write(path) as fh:
        fh.write("\n".join(lines) + "\n")


def write_html(path, run: dict, base: Path) -> None:
    """One file: the figures are embedded as data URIs, nothing else is linked.

    Parameters
    ----------
    path : str or Path
    run : dict
        As for :func:`write_markdown`.
    base : Path
        The folder the figures' paths are relative to.
    """
    e = html.escape
    parts = ["<!DOCTYPE html>", "<html lang=\"en\"><head><meta charset=\"utf-8\">",
             f"<title>torque report: {e(run['world'])}</title>",
             "<style>body{font-family:sans-serif;max-width:1100px;margin:2em auto;color:#222}"
             "table{border-collapse:collapse;margin:0.5em 0 1.5em}"
             "td,th{border:1px solid #bbb;padding:3px 8px;font-size:0.9em;text-align:right}"
             "th{background:#eef}td:first-child,th:first-child{text-align:left}"
             ".caution{background:#fff4e0;border-left:4px solid #c4501b;padding:0.6em 1em}"
             "img{max-width:100%}</style></head><body>",
             f"<h1>torque report: {e(run['world'])}</h1>",
             f"<p class=\"caution\"><strong>Caution.</strong> {e(CAUTION)}</p>", "<ul>"]
    parts += [f"<li>{e(s)}</li>" for s in run.get("summary", [])] + ["</ul>"]
    for title, header, rows, note in _tables(run):
        parts.append(f"<h2>{e(title)}</h2><table><tr>"
                     + "".join(f"<th>{e(h)}</th>" for h in header) + "</tr>")
        parts += ["<tr>" + "".join(f"<td>{e(c)}</td>" for c in r) + "</tr>" for r in rows]
        parts.append("</table>")
        if note:
            parts.append(f"<p>{e(note)}</p>")
    if run.get("figures"):
        parts.append("<h2>Figures</h2>")
        for title, fig in run["figures"]:
            data = base64.b64encode((base / fig).read_bytes()).decode("ascii")
            parts.append(f"<h3>{e(title)}</h3><img alt=\"{e(title)}\" "
                         f"src=\"data:image/png;base64,{data}\">")
    parts.append("</body></html>")
    with atomic_write(path) as fh:
        fh.write("\n".join(parts) + "\n")
