"""Text tables for the terminal: every command's human-readable summary, in one place.

Each function takes results (dicts or result objects) and returns text; the commands print
it. Machine-readable output (CSV, JSON) is written by :mod:`torque.io`.
"""

from __future__ import annotations

import numpy as np

__all__ = ["CAUTION_LINE", "pole", "check", "cooling", "torques", "fit", "p_value",
           "profile_span", "standard_errors", "note_lines", "rank"]

#: The caution every result printed on a terminal ends with.
CAUTION_LINE = ("caution: model-dependent research estimates, not for hazard or engineering "
                "use")


def pole(omega) -> str:
    """An Euler vector (rad/s, shape (3,)) as ``pole LAT N, LON E, rate R deg/Myr``.

    Parameters
    ----------
    omega : array_like, shape (3,)

    Returns
    -------
    str
    """
    from ..euler import vector_to_pole
    lat, lon, rate = vector_to_pole(omega)
    if float(rate) < 5e-7:       # zero to the printed precision: its pole means nothing
        return "none (no rotation to 1e-6 deg/Myr, so no pole)"
    return f"pole {float(lat):.4f} N, {float(lon):.4f} E, rate {float(rate):.6f} deg/Myr"


def check(report) -> str:
    """Human summary of a :class:`torque.validate.CheckReport`.

    Parameters
    ----------
    report : CheckReport

    Returns
    -------
    str
    """
    d = report.as_dict()
    R = d["radius_m"]
    lines = [f"world {d['world']!r}: radius {R / 1e3:.1f} km, {len(d['plates'])} plates, "
             f"{d['boundaries']['count']} boundary lines"
             + (" (derived from shared edges)" if d["boundaries"]["derived"] else ""),
             f"total area {d['total_area_m2']:.6e} m2 = "
             f"{d['total_area_m2'] / d['sphere_area_m2']:.12f} of the sphere", ""]
    w = max(5, *(len(p["plate"]) for p in d["plates"]))
    lines.append(f"{'plate':<{w}}  {'area km2':>12}  {'share':>6}  {'perimeter km':>12}  "
                 f"{'centroid lon':>12}  {'lat':>7}  {'vertices':>8}  neighbours")
    for p in d["plates"]:
        lines.append(f"{p['plate']:<{w}}  {p['area_m2'] / 1e6:12.4e}  "
                     f"{100 * p['area_fraction']:5.2f}%  {p['perimeter_m'] / 1e3:12,.0f}  "
                     f"{p['centroid_lon']:12.3f}  "
                     f"{p['centroid_lat']:7.3f}  {p['vertices']:8d}  "
                     f"{', '.join(p['neighbours'])}")
    if d["boundaries"]["length_m_by_kind"]:
        lines.append("")
        lines.append("boundary length by kind: " + ", ".join(
            f"{k} {v / 1e3:,.0f} km" for k, v in sorted(d["boundaries"]["length_m_by_kind"]
                                                       .items())))
    lines.append("")
    if report.problems:
        lines += [str(p) for p in report.problems]
    else:
        lines.append("no problems found")
    return "\n".join(lines)


def cooling(physics, depth_km, rows) -> str:
    """The table of ``torque cooling``.

    Parameters
    ----------
    physics : Physics
    depth_km : float
        The slab depth of the slab pull column.
    rows : list of dict
        From :func:`torque.hypothesis.cooling_table`.

    Returns
    -------
    str
    """
    lines = [f"{physics.model} cooling model; slab buoyancy of a slab reaching {depth_km:g} km "
             "(its full negative buoyancy: slab pull at coefficient 1)",
             f"{'age Myr':>8} {'depth m':>9} {'heat flow mW/m2':>16} {'ridge push N/m':>15} "
             f"{'slab buoyancy N/m':>18}"]
    for r in rows:
        lines.append(f"{r['age_myr']:8.1f} {r['depth_m']:9.1f} {r['heat_flow_mw_m2']:16.2f} "
                     f"{r['ridge_push_n_m']:15.4e} {r['slab_buoyancy_n_m']:18.4e}")
    return "\n".join(lines)


#: Notes of one kind shown before a summary line stands for the rest.
NOTES_SHOWN = 3


def note_lines(notes, verbose: bool = False) -> list:
    """Notes as printed: one line each with ``verbose``; otherwise notes of one kind (the
    same words after a plate's or term's name, numbers aside) that come more than
    :data:`NOTES_SHOWN` times make one line, with their count and the first few. Every
    note stays in the outputs that keep them (a fit's JSON).

    Parameters
    ----------
    notes : sequence of str
    verbose : bool

    Returns
    -------
    list of str
        Each starting ``note: ``.

    Examples
    --------
    >>> lines = note_lines([f"P{i}: half rate {i}.5 mm/yr" for i in range(5)] + ["slab: one"])
    >>> len(lines), lines[0][:48], lines[1]
    (2, 'note: half rate ... mm/yr on 5 plates or terms: ', 'note: slab: one')
    """
    import re
    notes = list(dict.fromkeys(notes))             # each message once
    if verbose:
        return [f"note: {n}" for n in notes]
    groups = {}
    for n in notes:
        head, sep, rest = n.partition(": ")
        key = re.sub(r"[-+]?\d[\d.e+-]*", "#", rest) if sep and " " not in head else n
        groups.setdefault(key, []).append(n)
    out = []
    for key, items in groups.items():
        if len(items) <= NOTES_SHOWN:
            out += [f"note: {n}" for n in items]
            continue
        shown = "; ".join(items[:NOTES_SHOWN])
        out.append(f"note: {key.replace('#', '...')} on {len(items)} plates or terms: "
                   f"{shown}; and {len(items) - NOTES_SHOWN} more (all with --verbose, and "
                   "in a fit's JSON)")
    return out


def torques(table, terms, fit_path=None, verbose: bool = False) -> str:
    """The summary of ``torque torques``: how the coefficients were set, each plate's
    largest terms in 10^25 N m and its total, and the terms' notes.

    Parameters
    ----------
    table : TorqueTable
    terms : list of ForceTerm
    fit_path : str, optional
        The fit the coefficients came from.
    verbose : bool
        Every note on its own line (see :func:`note_lines`).

    Returns
    -------
    str
    """
    src = set(table.sources)
    if "fitted" in src:
        how = f"at the fitted coefficients of {fit_path} (fixed ones as the hypothesis gives)"
    elif "unit" in src:
        free = [l for l, s in zip(table.labels, table.sources) if s == "unit"]
        how = (f"at coefficient 1 for the free term(s) {', '.join(free)} (no fit given: pass "
               "--coefficients FIT.json for the fitted values), fixed ones as given")
    else:
        how = "at the hypothesis' fixed coefficients"
    lines = [f"torques {how}; magnitudes in 10^25 N m"]
    w = max(5, *(len(p) for p in table.plates))
    total = np.linalg.norm(table.total_nm, axis=1) / 1e25
    lines.append(f"{'plate':<{w}}  largest terms" + ("" if not table.complete else
                                                      "  | total (balance residual)"))
    for p, terms_p in enumerate(table.largest(3)):
        big = ", ".join(f"{label} {mag:.3g}" for label, mag in terms_p) or "no torque"
        tail = f"  | {total[p]:.3g}" if table.complete else ""
        lines.append(f"{table.plates[p]:<{w}}  {big}{tail}")
    lines += note_lines([note for t in terms for note in t.notes], verbose)
    return "\n".join(lines)


def fit(d: dict, verbose: bool = False) -> str:
    """The coefficient table and misfit of ``torque fit`` (from the fit's dict).

    Parameters
    ----------
    d : dict
        :meth:`torque.results.FitResult.as_dict`.
    verbose : bool
        Every note on its own line (see :func:`note_lines`).

    Returns
    -------
    str
    """
    from .sentences import chi_square_summary, fits_disagree, frame_summary
    # the profile column only where intervals were computed (not with --no-profile)
    profiled = any(profile_span(c) for c in d["coefficients"].values() if c["free"])
    head = f"{'95 % profile interval':<31} " if profiled else ""
    lines = [f"hypothesis {d['hypothesis']!r}: velocity-space fit (preferred) and "
             "torque-space fit",
             f"{'term':<16} {'value':>11} {'std. error':>10}  {head}"
             f"{'torque space':>12}  {'unit'}"]
    for label, c in d["coefficients"].items():
        if c["free"]:
            span = f"{profile_span(c):<31} " if profiled else ""
            lines.append(f"{label:<16} {c['value']:11.4e} {c['stderr']:10.2e}  {span}"
                         f"{c['torque_space_value']:12.4e}  {c['unit']}")
        else:
            span = f"{'':<31} " if profiled else ""
            lines.append(f"{label:<16} {c['value']:11.4e} {'fixed':>10}  {span}{'':>12}  "
                         f"{c['unit']}")
    m = d["misfit"]
    if m.get("misfit_measure"):
        lines.append(f"minimised: {m['misfit_measure']}")
    if chi_square_summary(m):
        lines.append(chi_square_summary(m))
    if m.get("observations_constraint"):
        lines.append(f"the motions satisfy a rigid constraint ({m['observations_constraint']}): "
                     "3 observations fewer in the degrees of freedom and criteria")
    lines.append(f"RMS velocity misfit {m['rms_velocity_mm_yr']:.3f} mm/yr, variance "
                 f"reduction {100 * m['variance_reduction']:.2f} %, AIC {m['aic']:.1f}, "
                 f"BIC {m['bic']:.1f}")
    se_line = standard_errors(d)
    if se_line:
        lines.append(se_line)
    if m.get("chi_square_warning"):
        lines.append(f"warning: {m['chi_square_warning']}")
    for label, c in d["coefficients"].items():
        if c.get("at_bound"):
            lines.append(f"warning: {label} is at its {c['at_bound']} bound: its standard "
                         "error does not describe its uncertainty; read the profile interval")
    if d.get("frame"):
        lines.append(frame_summary(d["frame"]))
    for method, u in (d.get("uncertainty") or {}).items():
        spans = ", ".join(f"{label} {c.get('low', c['p2_5']):.4g} to "
                          f"{c.get('high', c['p97_5']):.4g}"
                          for label, c in u["coefficients"].items())
        lines.append(f"{method.replace('_', ' ')} ({u['members']} members, {u.get('fit', 'torque')}"
                     f"-space refits): 95 % intervals {spans}")
    lines += [f"warning: {w}" for w in fits_disagree(d)]
    # the circular-ages note is the command's warning on stderr; the JSON keeps it
    lines += note_lines([n for n in d.get("notes", []) if not n.startswith("circular:")],
                        verbose)
    lines.append(CAUTION_LINE)
    return "\n".join(lines)


def p_value(p: float) -> str:
    """A p-value as printed: two digits, and only "p < 1e-6" below that, since the
    residuals are spatially correlated and far tails of the F distribution mean nothing
    here.

    Parameters
    ----------
    p : float

    Returns
    -------
    str
    """
    return "p < 1e-6" if p < 1e-6 else f"p = {p:.2g}"


def rank(rows, tests) -> str:
    """The ranking table of ``torque rank``, its recommendation and its comparisons of
    nested pairs.

    Parameters
    ----------
    rows : Ranking
        Its ``rule``, ``reason`` and ``check`` (if any) are printed.
    tests : list of dict

    Returns
    -------
    str
    """
    rule = getattr(rows, "rule", "cross-validation")
    chi = any(r.cv_chi_square is not None for r in rows)
    wn = max(10, *(len(r.name) for r in rows))
    cv_head = (f"{'CV chi2':>9} {'± se':>6}" if chi else f"{'CV mm/yr':>9} {'± se':>6}")
    lines = [f"{'rank':>4}  {'hypothesis':<{wn}} {cv_head} {'rms mm/yr':>9} "
             f"{'VR %':>7} {'k':>2} {'AIC':>10} {'BIC':>10}"]
    for i, r in enumerate(rows, 1):
        mark = ("  <- recommended" if r.recommended else
                "  ~ best" if rule == "cross-validation" and r.within_one_se else "")
        cv = ((r.cv_chi_square, r.cv_chi_square_se) if chi else
              (r.cv_rms_mm_yr, r.cv_stderr_mm_yr))
        lines.append(f"{i:4d}  {r.name:<{wn}} {cv[0]:9.3f} {cv[1]:6.2f} "
                     f"{r.rms_velocity_mm_yr:9.3f} {100 * r.variance_reduction:7.2f} "
                     f"{r.free:2d} {r.aic:10.1f} {r.bic:10.1f}{mark}")
    if getattr(rows, "reason", None):
        lines.append(rows.reason)
    if getattr(rows, "check", None):
        lines.append(rows.check)
    for t in tests:
        pair = f"{t['smaller']!r} within {t['bigger']!r}"
        if t["test"] == "cross-validation":
            z = t["excess_se"]
            lines.append(f"cross-validation {pair}: the bigger predicts left-out plates "
                         f"{'better' if t['cv_difference_mm_yr'] > 0 else 'worse'} by "
                         f"{abs(t['cv_difference_mm_yr']):.3g} mm/yr"
                         + (f" ({abs(z):.1f} standard errors)" if z is not None else ""))
        elif t["p_value"] is not None:
            name = "likelihood ratio" if t["test"] == "likelihood-ratio" else "F-test"
            stat = "chi2" if t["test"] == "likelihood-ratio" else "F"
            red = t.get("reduced_chi_square_bigger")
            doubt = (f" (assumes the covariance right, but the bigger's reduced chi-square is "
                     f"{red:.3g}: prefer the F-test, --variance estimated)"
                     if red is not None and red > 2 and t["test"] == "likelihood-ratio"
                     else "")
            bound = " (on its bound: chi-bar-square mixture)" if t.get("weights") else ""
            lines.append(f"{name} {pair}: {stat} = {t['statistic']:.3g}, "
                         f"{p_value(t['p_value'])}{bound}{doubt}")
    order = {"cross-validation": "CV = leave-one-plate-out cross-validation error (lowest "
                                 "first)", "bic": "BIC (lowest first)"}.get(
        rule, "AIC (lowest first)")
    lines.append(f"sorted by {order}; CV {'chi2 = the mean chi-square of a left-out plate' if chi else 'in mm/yr'}"
                 ", ± its standard error over plates; AIC and BIC from the effective numbers "
                 "of observations and parameters")
    if tests and tests[0]["test"] == "cross-validation":
        lines.append("no p-values: with the area misfit the residuals are neither independent "
                     "nor of equal variance; give the covariance (--misfit chi-square) for "
                     "likelihood-ratio and F-tests")
    return "\n".join(lines)


def standard_errors(d: dict) -> str | None:
    """One line on which standard errors the table shows and the other kind beside them.

    Parameters
    ----------
    d : dict
        :meth:`torque.results.FitResult.as_dict`.

    Returns
    -------
    str or None
        None for a fit written before both kinds were reported.
    """
    m = d["misfit"]
    free = {l: c for l, c in d["coefficients"].items() if c["free"]}
    if not free or m.get("standard_errors") is None:
        return None
    lead = m["standard_errors"]
    qs = [c.get("quantile") for c in free.values()]
    if any(q is None for q in qs):
        return None
    q = (f"± {qs[0]:.3g}" if max(qs) - min(qs) < 5e-4 * max(qs) else
         "± " + ", ".join(f"{c['quantile']:.3g} ({l})" for l, c in free.items()))
    how = ("the covariance taken as known, normal quantile" if m.get("variance") == "known"
           else f"the variance estimated from the residuals, Student's t on {m.get('dof')} "
                "degrees of freedom")
    if lead == "robust":
        how = ("cluster-robust (sandwich, a plate a cluster), Student's t with Bell and "
               "McCaffrey's degrees of freedom")
    other = "classical" if lead == "robust" else "robust"
    beside = ", ".join(f"{l} {c.get(other + '_stderr'):.3g}" for l, c in free.items()
                       if c.get(other + "_stderr") is not None)
    return (f"standard errors: {lead} ({how}; 95 % = {q} x std. error)"
            + (f"; {other} beside: {beside}" if beside else ""))


def profile_span(c: dict) -> str:
    """A coefficient's profile interval as printed: ``"low to high"``, an end that is the
    coefficient's bound marked (``"0 to 0.031 (on its bound)"``: a one-sided interval),
    an end that could not be found said so; empty where none was computed.

    Parameters
    ----------
    c : dict
        One coefficient of :meth:`torque.results.FitResult.as_dict`.

    Returns
    -------
    str

    Examples
    --------
    >>> profile_span({"profile_low": 0.0, "profile_high": 0.0312,
    ...               "profile_low_at_bound": True})
    '0 to 0.0312 (on its bound)'
    >>> profile_span({"profile_low": 0.1, "profile_high": None})
    '0.1 to (not found)'
    """
    lo, hi = c.get("profile_low"), c.get("profile_high")
    if lo is None and hi is None:
        return ""
    span = (f"{'(not found)' if lo is None else _num(lo)} to "
            f"{'(not found)' if hi is None else _num(hi)}")
    if c.get("profile_low_at_bound") or c.get("profile_high_at_bound"):
        span += " (on its bound)"
    return span


def _num(x) -> str:
    """A number in an interval, to four significant digits ("-" when not found)."""
    return "-" if x is None else f"{x:.4g}"
