"""The report of a run: one self-contained HTML file (figures embedded) and a Markdown
summary, with the fitted coefficients, per-plate misfits, the hypothesis ranking and the
cautions."""

from __future__ import annotations

import base64
import html
import re
from pathlib import Path

from ..io.files import atomic_write
from .sentences import chi_square_summary, fits_disagree

__all__ = ["CAUTION", "write_markdown", "write_html", "write_series_report"]

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
             "yes" if r.get("recommended") else "",
             _fmt(r["rms_velocity_mm_yr"]), _fmt(100 * r["variance_reduction"]),
             str(r["free"]), f"{r['aic']:.1f}", f"{r['bic']:.1f}"]
            for i, r in enumerate(run["rank"])]
    reason = run.get("rank_reason")
    out.append(("Hypotheses, best first (by cross-validation)",
                ["rank", "hypothesis", "CV misfit mm/yr", "± se", "within 1 se of best",
                 "recommended", "RMS misfit mm/yr", "variance reduction %", "free", "AIC",
                 "BIC"], rows,
                "CV: leave-one-plate-out cross-validation error, with its standard error "
                "over plates; a hypothesis within one standard error of the best (the best "
                "one's own standard error) cannot be told apart from it by cross-validation. "
                "AIC and BIC come from the effective numbers of observations and parameters."
                + (f" {reason[0].upper()}{reason[1:]}." if reason else "")))
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
    out += _uncertainty_tables(fits)
    out.append(_frame_table(fits))
    warnings = _warnings(run, fits)
    if warnings:
        out.append(("Warnings", ["where", "warning"], warnings,
                    "Everything here is also in the fits' JSON (notes) or the world check."))
    chosen = next((r for r in run["rank"] if r.get("recommended")), run["rank"][0])
    best = run["fits"][chosen["name"]]
    rows = [[p.plate, f"{p.observed.lat:.2f}, {p.observed.lon:.2f}", _fmt(p.observed.rate),
             f"{p.predicted.lat:.2f}, {p.predicted.lon:.2f}", _fmt(p.predicted.rate),
             _fmt(p.pole_distance_deg), _fmt(p.rms_velocity_mm_yr)] for p in best.plates]
    out.append((f"Per-plate fit of the recommended hypothesis ({best.hypothesis})",
                ["plate", "observed pole (lat, lon)", "rate deg/Myr", "predicted pole",
                 "rate deg/Myr", "pole distance deg", "RMS misfit mm/yr"], rows, None))
    return out


def _uncertainty_tables(fits) -> list:
    """One table per fit of every 95 % interval of its free coefficients: standard error,
    profile likelihood and each resampling."""
    out = []
    for name, fit in fits:
        methods = list((fit.uncertainty or {}).items())
        note = None if out else (
            "95 % intervals. Resampled members are refitted by the velocity-space fit unless "
            "the JSON says otherwise; the profile likelihood holds where the misfit is not "
            "quadratic or a bound is near.")
        header = ["term", "value", "standard error interval", "profile likelihood"] + [
            f"{m.replace('_', ' ')} ({u['members']})" for m, u in methods]
        rows = []
        for label, c in fit.coefficients.items():
            if not c.free:
                continue
            q = c.quantile or 1.96          # a fit written before the quantile was
            bound = " (on its bound)" if c.profile_low_at_bound or c.profile_high_at_bound \
                else ""
            row = [label, _fmt(c.value),
                   f"{_fmt(c.value - q * c.stderr)} to {_fmt(c.value + q * c.stderr)}",
                   f"{_fmt(c.profile_low)} to {_fmt(c.profile_high)}{bound}"
                   if c.profile_high is not None else "-"]
            for _, u in methods:
                s = u["coefficients"].get(label, {})
                row.append(f"{_fmt(s.get('low', s.get('p2_5')))} to "
                           f"{_fmt(s.get('high', s.get('p97_5')))}")
            rows.append(row)
        if rows:
            out.append((f"Uncertainty: {name}", header, rows, note))
    return out


def _frame_table(fits):
    """The mantle frame and the net rotations of every fit."""
    rows = []
    for name, fit in fits:
        f = fit.frame or {}
        r = f.get("rotation")
        how = "fitted" if f.get("free") else "given" if f.get("given") else "assumed"
        se = f.get("stderr_deg_myr")
        rows.append([name, how,
                     f"{r['lat']:.2f}, {r['lon']:.2f}" if r else "-",
                     _fmt(r["rate"]) if r else "0",
                     _fmt(max(se)) if se else "-",
                     _fmt(f.get("net_rotation_observed", {}).get("rate")),
                     _fmt(f.get("net_rotation_predicted", {}).get("rate"))])
    return ("Mantle frame and net rotation", [
        "fit", "frame", "mantle pole (lat, lon)", "mantle rate deg/Myr",
        "std. error deg/Myr", "net rotation observed deg/Myr",
        "net rotation predicted deg/Myr"], rows,
        "The mantle's rotation in the frame of the observed motions: assumed zero (the "
        "motions taken to be in the mantle's frame), fitted (--free-frame) or given "
        "(--mantle-rotation). The net rotation is that of the lithosphere relative to the "
        "mantle.")


def _warnings(run, fits) -> list:
    """Every warning a reader must see: circular fits, disagreeing fits, coefficients at
    a bound, and the world check's warnings (repaired geometry)."""
    rows = []
    for name, fit in fits:
        for note in fit.notes:
            if note.startswith("circular:"):
                rows.append([name, note[len("circular:"):].strip()])
        rows += [[name, w] for w in fits_disagree(fit.as_dict())]
        rows += [[name, f"{label} is at its {c.at_bound} bound"]
                 for label, c in fit.coefficients.items() if c.at_bound]
    for problem in run.get("check_problems", []):
        rows.append(["world check", problem])
    return rows


def _manifest_tables(m) -> list:
    """The run manifest as tables: what ran, and every input with its SHA-256."""
    about = [["tool", f"{m['tool']} {m['version']}"], ["commit", m.get("commit") or "-"],
             ["Python", m["python"]], ["platform", m["platform"]],
             ["packages", ", ".join(f"{k} {v}" for k, v in m["packages"].items() if v)],
             ["seeds", ", ".join(f"{k} {v}" for k, v in m["seeds"].items()) or "-"],
             ["started (UTC)", m["started_utc"]], ["wall time", f"{m['wall_time_s']:.1f} s"]]
    return [("Run manifest", ["item", "value"], about, None),
            ("Inputs", ["file", "bytes", "SHA-256"],
             [[i["path"], str(i["bytes"]), i["sha256"]] for i in m["inputs"]], None),
            ("Commands", ["#", "command line"],
             [[str(k + 1), c] for k, c in enumerate(m["commands"])], None)]


def _fit_note(fit):
    """What a reader of a fit's table must know there: a warning that the fit is circular,
    disagreeing fits, coefficients at a bound, what was minimised and the chi-square (None
    if nothing). The frame and the intervals have sections of their own."""
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
    line = chi_square_summary(m)
    if line:
        parts.append(line[0].upper() + line[1:] + ".")
    return " ".join(parts) or None


def write_markdown(path, run: dict, tables=None) -> None:
    """The report's summary as Markdown (tables, figure links), atomically.

    Parameters
    ----------
    path : str or Path
    run : dict
        ``world``, ``summary``, ``truth``, ``rank`` rows, ``fits`` (FitResult by
        hypothesis), ``figures`` (title, relative path).
    tables : list, optional
        ``(title, header, rows, note)`` of each table; default those of a fit run.
    """
    lines = [f"# torque report: {run['world']}", "", f"> **Caution.** {CAUTION}", ""]
    lines += [f"- {s}" for s in run.get("summary", [])] + [""]
    for title, header, rows, note in (_tables(run) if tables is None else tables):
        lines += [f"## {title}", "", "| " + " | ".join(header) + " |",
                  "|" + "---|" * len(header)]
        lines += ["| " + " | ".join(r) + " |" for r in rows]
        lines += (["", note] if note else []) + [""]
    if run.get("figures"):
        lines += ["## Figures", ""]
        for title, fig in run["figures"]:
            lines += [f"### {title}", "", f"![{title}]({fig})", ""]
    for title, header, rows, note in (_manifest_tables(run["manifest"])
                                      if run.get("manifest") else []):
        lines += [f"## {title}", "", "| " + " | ".join(header) + " |",
                  "|" + "---|" * len(header)]
        lines += ["| " + " | ".join(r) + " |" for r in rows] + [""]
    with atomic_write(path) as fh:
        fh.write("\n".join(lines) + "\n")


_NUMBER = re.compile(r"^[-+]?(\d[\d,]*\.?\d*|\.\d+)(e[-+]?\d+)?( to [-+]?\S+)?%?$")


def _html_table(title, header, rows, note) -> list:
    """A table as HTML lines: numbers right-aligned, text left-aligned."""
    e = html.escape
    out = [f"<h2>{e(title)}</h2><table><tr>" + "".join(f"<th>{e(h)}</th>" for h in header)
           + "</tr>"]
    for r in rows:
        out.append("<tr>" + "".join(
            f"<td>{e(c)}</td>" if _NUMBER.match(c.strip()) or c in ("-", "")
            else f"<td class=\"t\">{e(c)}</td>" for c in r) + "</tr>")
    out.append("</table>")
    if note:
        out.append(f"<p>{e(note)}</p>")
    return out


def write_html(path, run: dict, base: Path, tables=None) -> None:
    """One file: the figures are embedded as data URIs, nothing else is linked.

    Parameters
    ----------
    path : str or Path
    run : dict
        As for :func:`write_markdown`.
    base : Path
        The folder the figures' paths are relative to.
    tables : list, optional
        As for :func:`write_markdown`.
    """
    e = html.escape
    parts = ["<!DOCTYPE html>", "<html lang=\"en\"><head><meta charset=\"utf-8\">",
             f"<title>torque report: {e(run['world'])}</title>",
             "<style>body{font-family:sans-serif;max-width:1100px;margin:2em auto;color:#222}"
             "table{border-collapse:collapse;margin:0.5em 0 1.5em}"
             "td,th{border:1px solid #bbb;padding:3px 8px;font-size:0.9em;text-align:right}"
             "th{background:#eef;text-align:left}td.t{text-align:left}"
             "td.t code{font-size:0.95em}"
             ".caution{background:#fff4e0;border-left:4px solid #c4501b;padding:0.6em 1em}"
             "img{max-width:100%}</style></head><body>",
             f"<h1>torque report: {e(run['world'])}</h1>",
             f"<p class=\"caution\"><strong>Caution.</strong> {e(CAUTION)}</p>", "<ul>"]
    parts += [f"<li>{e(s)}</li>" for s in run.get("summary", [])] + ["</ul>"]
    for table in (_tables(run) if tables is None else tables):
        parts += _html_table(*table)
    if run.get("figures"):
        parts.append("<h2>Figures</h2>")
        for title, fig in run["figures"]:
            data = base64.b64encode((base / fig).read_bytes()).decode("ascii")
            parts.append(f"<h3>{e(title)}</h3><img alt=\"{e(title)}\" "
                         f"src=\"data:image/png;base64,{data}\">")
    for table in (_manifest_tables(run["manifest"]) if run.get("manifest") else []):
        parts += _html_table(*table)
    parts.append("</body></html>")
    with atomic_write(path) as fh:
        fh.write("\n".join(parts) + "\n")


def _series_tables(result, tables, truth=None) -> list:
    """(title, header, rows, note) of a series report: coefficients, ranking, the time
    section, then a section per stage."""
    fit = result.fit
    out = []
    if truth:
        out.append(("Synthetic data: what made the observed motions",
                    ["term", "true coefficient"],
                    [[k, _fmt(v)] for k, v in truth["true_coefficients"].items()],
                    f"Every stage: {truth['hypothesis']}, noise "
                    f"{truth['noise_deg_myr_per_component']} deg/Myr per component."))
    se = [float(x) for x in (fit.cov.diagonal() ** 0.5)]
    mc = result.monte_carlo
    rows = []
    for j, name in enumerate(fit.params):
        row = [name, _fmt(float(fit.parameters[j])), _fmt(se[j])]
        if mc is not None:
            row += [_fmt(float(mc["sd"][j])),
                    f"{_fmt(float(mc['low'][j]))} to {_fmt(float(mc['high'][j]))}"
                    if mc["low"] is not None else "-"]
        rows.append(row)
    header = ["coefficient", "value", "std. error"] + (
        ["Monte Carlo sd", "Monte Carlo 95 %"] if mc is not None else [])
    out.append(("Coefficients fitted to every stage at once", header, rows,
                f"Minimised: the sum over stages of each stage's "
                f"{'chi-square' if fit.misfit == 'chi-square' else 'area-integrated squared velocity misfit'}"
                f"; {fit.n_obs} observations, {len(fit.params)} parameters"
                + (f"; Monte Carlo: {mc['n']} draws of every stage's motions, seed "
                   f"{mc['seed']}" if mc is not None else "") + "."))
    rows = [[str(i + 1), r["name"], _fmt(r["cv_rms_mm_yr"]), _fmt(r["cv_stderr_mm_yr"]),
             "yes" if r["within_one_se"] else "no", _fmt(r["rms_mm_yr"]), str(r["k"]),
             f"{r['aic']:.1f}", f"{r['bic']:.1f}"] for i, r in enumerate(result.ranking)]
    out.append(("Hypotheses over the series, best first", ["rank", "hypothesis",
                "CV misfit mm/yr", "± se", "within 1 se of best", "RMS misfit mm/yr", "k",
                "AIC", "BIC"], rows,
                "CV: leave-one-plate-out (the plate left out of every stage) cross-validation "
                "error over all stages, with its standard error over plates."))
    m = tables["misfit"]
    out.append(("Through time: misfit per stage", ["stage", "time Ma", "RMS misfit mm/yr",
                                                   "variance reduction %"],
                [[str(s), _fmt(t), _fmt(r), _fmt(100 * v)] for s, t, r, v in
                 zip(m["stage"], m["time_ma"], m["rms_velocity_mm_yr"],
                     m["variance_reduction"])], None))
    pr, tq = tables["predicted"], tables["torques"]
    for s, st in enumerate(result.stages, start=1):
        rows = []
        for i in range(len(pr["plate"])):
            if pr["stage"][i] != s:
                continue
            plate = pr["plate"][i]
            terms = [(tq["magnitude_1e25_nm"][j], tq["term"][j]) for j in range(len(tq["term"]))
                     if tq["stage"][j] == s and tq["plate"][j] == plate
                     and tq["term"][j] != "total"]
            top = ", ".join(f"{t} {_fmt(m, 3)}" for m, t in sorted(terms, reverse=True)[:3])
            rows.append([plate, _fmt(pr["observed_speed_mm_yr"][i]),
                         _fmt(pr["predicted_speed_mm_yr"][i]), top])
        coefs = ", ".join(f"{l} {_fmt(float(v))}" for l, v in
                          zip(fit.labels, fit.values[s - 1]))
        out.append((f"{st.name}", ["plate", "observed speed mm/yr", "predicted speed mm/yr",
                                   "largest torques (10^25 N m)"], rows,
                    f"Coefficients: {coefs}. RMS misfit "
                    f"{_fmt(float(fit.stage_rms_mm_yr[s - 1]))} mm/yr."))
    return out


def write_series_report(outdir, result, tables, figures, manifest=None, truth=None):
    """``report.md`` and ``report.html`` (figures embedded) of a stage series run.

    Parameters
    ----------
    outdir : Path
    result : SeriesResult
    tables : dict
        :func:`torque.io.series.series_tables`.
    figures : list of (title, file name in ``outdir``)
    manifest : dict, optional
    truth : dict, optional
        A synthetic series' truth (``true_coefficients``, ``hypothesis``, ...).
    """
    outdir = Path(outdir)
    fit = result.fit
    summary = [f"{len(result.stages)} stages from {min(st.time_ma for st in result.stages):g} "
               f"to {max(st.time_ma for st in result.stages):g} Ma, one hypothesis "
               f"({result.ranking[0]['name']} ranks first)",
               "fitted: " + ", ".join(f"{n} {_fmt(float(v))}" for n, v in
                                      zip(fit.params, fit.parameters)),
               f"tasks ran on {result.executor}"]
    run = {"world": result.series.name, "summary": summary, "figures": figures,
           "manifest": manifest}
    rows = _series_tables(result, tables, truth)
    write_markdown(outdir / "report.md", run, rows)
    write_html(outdir / "report.html", run, outdir, rows)
