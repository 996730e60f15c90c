"""The workbook's and the CSV folder's tables of the studies (rules compared, value of
information, sweeps, designs, simulation) read back and compared with the JSON of the same
run. Used by check_workbook.py, which owns the runs and the Checks object `c`.

Tolerances: the workbook's numbers are stored by libxlsxwriter with 16 significant digits
(%.16G), so they read back within 2 units of the 16th digit: relative 1e-15 (c.close's
default). The CSV files write the shortest decimal that reads back to the same double as the
JSON: compared exactly. Nothing is compared with lopside's own numbers from another source: the JSON is the
contract, and check_studies.py checks the JSON against scipy.
"""

import configparser
import math
import os

# The workbook's own sheets: a sweep may not take their names, present or not.
FIXED_SHEETS = ["Summary", "Case", "Rule", "Rules", "Value", "Designs", "Simulation", "Inputs",
                "History"]
SHEET_UNITS = 31          # Excel's limit on a sheet name, in UTF-16 units
FILE_NAME_BYTES = 100     # bytes of a sweep's name kept in its CSV file names
FLAT = ["0.01", "0.05", "0.1"]
PCT = ["1%", "5%", "10%"]


# --- names ---------------------------------------------------------------------------------

def ascii_lower(s):
    """Lower case of ASCII letters only, as libxlsxwriter and Excel compare sheet names."""
    return "".join(ch.lower() if ch.isascii() else ch for ch in s)


def clip_units(s, units):
    out, used = "", 0
    for ch in s:
        u = 2 if ord(ch) > 0xFFFF else 1
        if used + u > units:
            break
        out += ch
        used += u
    return out


def sweep_sheet_names(j):
    """The sheet name of every sweep, by the rule the README states: forbidden characters
    ([ ] : * ? / \\ and control characters) become '_', at most 31 characters, an apostrophe
    at either end becomes '_', and " (2)", " (3)", ... replace the end of a name taken
    (ASCII case ignored) by a sheet or by one of the workbook's own sheet names."""
    taken = [ascii_lower(n) for n in FIXED_SHEETS]
    out = []
    for sw in j["sweeps"]:
        clean = "".join("_" if ord(ch) < 0x20 or ch in "[]:*?/\\" else ch for ch in sw["name"])
        base = clip_units(clean or "sweep", SHEET_UNITS)
        if base.startswith("'"):
            base = "_" + base[1:]
        if base.endswith("'"):
            base = base[:-1] + "_"
        name, k = base, 2
        while ascii_lower(name) in taken:
            suffix = f" ({k})"
            name = clip_units(base, SHEET_UNITS - len(suffix)) + suffix
            k += 1
        taken.append(ascii_lower(name))
        out.append(name)
    return out


def expected_sheets(j):
    """Every sheet the workbook of run j must hold, in order."""
    out = ["Summary", "Case"]
    if j["rule"] is not None:
        out.append("Rule")
    if j["rules"]:
        out.append("Rules")
    if j["value"] is not None:
        out.append("Value")
    out += sweep_sheet_names(j)
    if j["designs"]:
        out.append("Designs")
    if j.get("simulation"):
        out.append("Simulation")
    return out + ["Inputs"]


def sweep_csv_bases(j, earlier):
    """The base name ("sweep_NAME") of every sweep's CSV files: bytes other than ASCII letters,
    digits, '.', '-', '_' become '_', at most 100 bytes, and "_2", "_3", ... added while any
    of its files (.csv, _switch_points.csv, _threshold.csv) clashes, ASCII case ignored, with
    a file written before it. `earlier` lists the files written before the sweeps."""
    taken = [n.lower() for n in earlier]
    out = []
    for sw in j["sweeps"]:
        raw = sw["name"].encode("utf-8")[:FILE_NAME_BYTES]
        clean = "".join(chr(b) if (chr(b).isascii() and (chr(b).isalnum() or chr(b) in "._-"))
                        else "_" for b in raw)
        k = 1
        while True:
            base = f"sweep_{clean}" if k == 1 else f"sweep_{clean}_{k}"
            files = [base + s for s in (".csv", "_switch_points.csv", "_threshold.csv")]
            if not any(f.lower() in taken for f in files):
                break
            k += 1
        out.append(base)
        if sw["kind"] == "threshold":
            taken += [(base + ".csv").lower(), (base + "_threshold.csv").lower()]
        else:
            taken.append((base + ".csv").lower())
            if "case_action" in sw["points"][0] and isinstance(sw["points"][0]["case_action"],
                                                                 str):
                taken.append((base + "_switch_points.csv").lower())
    return out


# --- reading ------------------------------------------------------------------------------

def table(ws, name):
    """A native table as (header, rows, (row, col) of its top-left, 1-based)."""
    cells = ws[ws.tables[name].ref]
    header = [c.value for c in cells[0]]
    rows = [[c.value for c in r] for r in cells[1:]]
    return header, rows, (cells[0][0].row, cells[0][0].column)


def chart_titles(ws):
    out = []
    for ch in ws._charts:
        t = ch.title
        rich = t.tx.rich if t is not None and t.tx is not None else None
        out.append("".join(r.t for p in rich.p for r in (p.r or [])) if rich else None)
    return out


def sheet_text(ws):
    return [v for row in ws.iter_rows(values_only=True) for v in row if v is not None]


def info_value(ws, label_start, col=5):
    """The value (column E by default) of the information line whose label starts so."""
    for row in ws.iter_rows(min_col=1, max_col=1):
        v = row[0].value
        if isinstance(v, str) and v.startswith(label_start):
            return ws.cell(row[0].row, col).value
    return f"no line {label_start!r}"


def oriented(j, obj, loss_key, payoff_key):
    return obj[payoff_key] if j["orientation"] == "payoff" else obj[loss_key]


def unit_of(j):
    return j["problem"]["score_unit"] or "units"


def number_or_none(c, what, got, want):
    if want is None:
        return c.ok(what, got is None, f"got {got!r}, want nothing")
    return c.close(what, got, want)


def state_keys(j):
    """The states as the JSON's rates name them (labels, or values as text), None for grid
    states, whose rates are per action only."""
    states = j["problem"]["states"]
    if "grid" in states:
        return None
    if "labels" in states:
        return states["labels"]
    for src in ([p["rates"] for sw in j["sweeps"] for p in sw["points"]] +
                [m.get("rates") for m in (j.get("simulation") or {}).get("rules", [])]):
        if src:
            return list(next(iter(src.values())).keys())
    return [f"{v:.17g}" for v in states["values"]]


def rate_pairs(j, rates, actions):
    """[((action, state or None), rate or None)] in the order of the rate columns."""
    keys = state_keys(j)
    out = []
    for a in actions:
        v = None if rates is None else rates[a]
        if keys is None:
            out.append(((a, None), v))
        else:
            out.extend(((a, s), None if v is None else v[s]) for s in keys)
    return out


def ini_rule_overrides(text, name):
    cp = configparser.ConfigParser(inline_comment_prefixes=(";", "#"), comment_prefixes=(";", "#"),
                                   interpolation=None)
    cp.optionxform = str
    cp.read_string(text)
    sec = f"rule.{name}"
    return {k: v for k, v in cp.items(sec)} if cp.has_section(sec) else {}


# --- the workbook -------------------------------------------------------------------------

def check_widths(c, name, ws, tables):
    """Every column of every table is readable and none is wider than a line of text."""
    from openpyxl.utils import get_column_letter
    bad = []
    for t in tables:
        _, _, (r0, c0) = table(ws, t)
        h, _, _ = table(ws, t)
        for i in range(len(h)):
            letter = get_column_letter(c0 + i)
            w = ws.column_dimensions[letter].width
            if w is None or not 9 <= w <= 80:
                bad.append((t, h[i], w))
    c.ok(f"{name}: {ws.title}: column widths between 9 and 80 characters", not bad, repr(bad))


def check_summary(c, name, j, wb, names):
    ws = wb["Summary"]
    text = sheet_text(ws)
    col_a = [r[0].value for r in ws.iter_rows(min_col=1, max_col=1)]
    at = col_a.index("Sheets") if "Sheets" in col_a else None
    c.ok(f"{name}: Summary has a Sheets section", at is not None)
    if at is not None:
        listed = [v for v in col_a[at + 1:] if v]
        c.equal(f"{name}: Summary lists every sheet", listed, wb.sheetnames[1:])
    sim = j.get("simulation")
    if sim:
        c.ok(f"{name}: Summary shows the seed", str(sim["seed"]) in text)
    value = j["value"]
    if value is not None and value["computed"]:
        c.close(f"{name}: evpi_design", wb["Summary"][names["evpi_design"][1]].value,
                value["evpi"])
        best = value["best"]
        if best is None:
            c.ok(f"{name}: no best_extra names without a best purchase",
                 not any(k.startswith("best_extra") for k in names))
        else:
            c.equal(f"{name}: best_extra_channel",
                    wb["Summary"][names["best_extra_channel"][1]].value, best["channel"])
            c.equal(f"{name}: best_extra_n", wb["Summary"][names["best_extra_n"][1]].value,
                    best["n"])
            c.close(f"{name}: best_extra_net", wb["Summary"][names["best_extra_net"][1]].value,
                    best["net"])


def study_names(j):
    """The defined names the studies add to the Summary, with the JSON value each holds."""
    out = {}
    value = j["value"]
    if value is not None and value["computed"]:
        out["evpi_design"] = value["evpi"]
        if value["best"] is not None:
            out["best_extra_channel"] = value["best"]["channel"]
            out["best_extra_n"] = value["best"]["n"]
            out["best_extra_net"] = value["best"]["net"]
    return out


def check_rules_sheet(c, name, j, ws, text):
    unit = unit_of(j)
    payoff = j["orientation"] == "payoff"
    h, rows, _ = table(ws, "rules")
    word = "payoff" if payoff else "risk"
    want_head = ["rule", "kind", "decides by", f"{word} ({unit} per decision)",
                 f"regret ({unit} per decision)"]
    c.equal(f"{name}: rules header", h[:5], want_head)
    rule = j["rule"]
    want = [("bayes", "Bayes rule",
             oriented(j, rule, "bayes_risk", "bayes_payoff") if rule["computed"] else None,
             0 if rule["computed"] else None)]
    for r in j["rules"]:
        want.append((r["name"], r["kind"], r.get("payoff" if payoff else "risk"),
                     r.get("regret")))
    c.equal(f"{name}: rules rows", [(r[0], r[1]) for r in rows], [(w[0], w[1]) for w in want])
    for r, w in zip(rows, want):
        number_or_none(c, f"{name}: {w[0]} {word}", r[3], w[2])
        number_or_none(c, f"{name}: {w[0]} regret", r[4], w[3])
    for r, jr in zip(rows[1:], j["rules"]):
        if not jr["computed"]:
            c.equal(f"{name}: {jr['name']} says why", r[h.index("note")],
                    "not computed: " + jr["not_computed"])
        if jr["kind"] == "believed":
            for k, v in ini_rule_overrides(text, jr["name"]).items():
                if "." in k:
                    c.ok(f"{name}: {jr['name']} decides by {k}", f"{k} = {v}" in r[2], r[2])
        if jr["kind"] == "threshold":
            at = ini_rule_overrides(text, jr["name"])["at"]
            c.ok(f"{name}: {jr['name']} threshold in words",
                 f"at or above {float(at):.10g}" in r[2], r[2])
    titles = chart_titles(ws)
    c.equal(f"{name}: Rules chart", titles,
            [f"Regret of each rule against the Bayes rule ({unit} per decision)"])
    check_widths(c, name, ws, ["rules"])


def check_value_sheet(c, name, j, ws):
    unit = unit_of(j)
    value = j["value"]
    cost = value["cost"]
    if value["extra"]:
        h, rows, _ = table(ws, "value_extra")
        c.equal(f"{name}: value_extra header", h[:5],
                ["channel", "more measurements", f"EVSI ({unit} per decision)",
                 f"cost ({unit} per decision)", f"net of cost ({unit} per decision)"])
        c.equal(f"{name}: value_extra rows", [(r[0], r[1]) for r in rows],
                [(x["channel"], x["n"]) for x in value["extra"]])
        for r, x in zip(rows, value["extra"]):
            number_or_none(c, f"{name}: EVSI {x['channel']} {x['n']}", r[2], x["evsi"])
            c.close(f"{name}: cost {x['channel']} {x['n']}", r[3], x["n"] * cost)
            number_or_none(c, f"{name}: net {x['channel']} {x['n']}", r[4], x["net"])
            if x.get("on_the_mean"):
                c.ok(f"{name}: lower bound marked", "at least" in (r[h.index("note")] or ""))
        r0 = table(ws, "value_extra")[2][0]
        c.ok(f"{name}: EVSI in the score format",
             ws.cell(r0 + 1, 3).number_format in ("0.000", "0.00000", "#,##0.00"),
             ws.cell(r0 + 1, 3).number_format)
        n_channels = len({x["channel"] for x in value["extra"]})
        titles = chart_titles(ws)
        c.equal(f"{name}: Value chart", [t.split(":")[0] for t in titles],
                ["Value of extra measurements"])
        c.equal(f"{name}: Value chart series", len(ws._charts[0].series),
                min(2 * n_channels, 8))
    if value["case_next"]:
        h, rows, _ = table(ws, "value_case_next")
        c.equal(f"{name}: value_case_next header", h[:2],
                ["channel", f"value for the case ({unit})"])
        c.equal(f"{name}: value_case_next channels", [r[0] for r in rows],
                [x["channel"] for x in value["case_next"]])
        for r, x in zip(rows, value["case_next"]):
            number_or_none(c, f"{name}: next {x['channel']}", r[1], x["value"])
    if value["computed"]:
        c.close(f"{name}: Value sheet EVPI", info_value(ws, "Value of perfect information"),
                value["evpi"])
    check_widths(c, name, ws, [t for t in ("value_extra", "value_case_next") if t in ws.tables])


def check_grid(c, name, j, ws, sw, header_row, want_of):
    """The grid (x down, y across) of one number per point, under a 3-colour scale."""
    cells = [ws.cell(header_row, col) for col in range(1, ws.max_column + 1)]
    corner = next((x for x in cells if isinstance(x.value, str) and " \\ y: " in x.value), None)
    if not c.ok(f"{name}: {sw['name']} has a grid", corner is not None):
        return
    pts = sw["points"]
    ys = sorted({p["y"] for p in pts}, key=[p["y"] for p in pts].index)
    xs = sorted({p["x"] for p in pts}, key=[p["x"] for p in pts].index)
    r0, c0 = corner.row, corner.column
    for k, y in enumerate(ys):
        c.close(f"{name}: grid y {k}", ws.cell(r0, c0 + 1 + k).value, y)
    for i, x in enumerate(xs):
        c.close(f"{name}: grid x {i}", ws.cell(r0 + 1 + i, c0).value, x)
        for k in range(len(ys)):
            number_or_none(c, f"{name}: grid cell {i},{k}", ws.cell(r0 + 1 + i, c0 + 1 + k).value,
                           want_of(pts[k * len(xs) + i]))
    from openpyxl.utils import get_column_letter
    want_ref = (f"{get_column_letter(c0 + 1)}{r0 + 1}:"
                f"{get_column_letter(c0 + len(ys))}{r0 + len(xs)}")
    found = [(str(cf.sqref), [r.colorScale for r in cf.rules]) for cf in ws.conditional_formatting]
    ok = any(ref == want_ref and any(s is not None and len(s.color) == 3 for s in scales)
             for ref, scales in found)
    c.ok(f"{name}: {sw['name']} grid has a 3-colour scale over {want_ref}", ok, repr(found))


def check_path_sweep(c, name, j, ws, k, sw):
    unit = unit_of(j)
    payoff = j["orientation"] == "payoff"
    actions = j["problem"].get("actions", [])
    estimate = "bayes_estimate" in j["case"]
    tname = f"sweep_{k + 1}"
    h, rows, (r0, _) = table(ws, tname)
    pts = sw["points"]
    c.equal(f"{name}: {tname} rows", len(rows), len(pts))
    col = {v: i for i, v in enumerate(h)}
    risk_head = f"Bayes {'payoff' if payoff else 'risk'} ({unit} per decision)"
    for need in (f"x: {sw['x']}", risk_head, f"EVPI ({unit} per decision)"):
        c.ok(f"{name}: {tname} has column {need}", need in col, repr(h))
    if "y" in sw:
        c.ok(f"{name}: {tname} has the y column", f"y: {sw['y']}" in col, repr(h))
    switch_cols = [v for v in h if v.startswith("switch point ")]
    for i, (r, p) in enumerate(zip(rows, pts)):
        c.close(f"{name}: {tname} x {i}", r[0], p["x"])
        if "y" in sw:
            c.close(f"{name}: {tname} y {i}", r[1], p["y"])
        number_or_none(c, f"{name}: {tname} risk {i}", r[col[risk_head]],
                       oriented(j, p, "bayes_risk", "bayes_payoff"))
        number_or_none(c, f"{name}: {tname} EVPI {i}", r[col[f"EVPI ({unit} per decision)"]],
                       p["evpi"])
        if estimate:
            uname = j["problem"]["unit"]
            head = f"case estimate ({uname})" if uname else "case estimate"
            c.close(f"{name}: {tname} case estimate {i}", r[col[head]], p["case_action"])
            for lv, pct in zip(range(3), PCT):
                f = p["flatness"]
                want_from = f["ranges"][lv]["from"] if f else None
                want_to = f["ranges"][lv]["to"] if f else None
                number_or_none(c, f"{name}: {tname} flat from", r[col[f"estimates within {pct} from"]],
                               want_from)
                number_or_none(c, f"{name}: {tname} flat to", r[col[f"estimates within {pct} to"]],
                               want_to)
            continue
        c.equal(f"{name}: {tname} case action {i}", r[col["case action"]], p["case_action"])
        for (a, s), v in rate_pairs(j, p["rates"], actions):
            head = f"P({a} | {s})" if s is not None else f"P({a})"
            if c.ok(f"{name}: {tname} has {head}", head in col, repr(h)):
                number_or_none(c, f"{name}: {tname} {head} {i}", r[col[head]], v)
                if v is not None:
                    c.equal(f"{name}: {tname} {head} format",
                            ws.cell(r0 + 1 + i, 1 + col[head]).number_format, "0.0000")
        if switch_cols:
            got = [r[col[v]] for v in switch_cols if r[col[v]] is not None]
            c.equal(f"{name}: {tname} switch count {i}", len(got), len(p["switch_points"]))
            for g, sp in zip(got, p["switch_points"]):
                c.close(f"{name}: {tname} switch point {i}", g, sp["x"])
    if not estimate and any(p["switch_points"] for p in pts) and not switch_cols:
        sname = f"sweep_{k + 1}_switch"
        if c.ok(f"{name}: {sname} exists", sname in ws.tables):
            sh, srows, _ = table(ws, sname)
            want = [(p["x"], p.get("y"), sp) for p in pts for sp in p["switch_points"]]
            c.equal(f"{name}: {sname} rows", len(srows), len(want))
            for r, (x, y, sp) in zip(srows, want):
                c.close(f"{name}: {sname} x", r[0], x)
                if y is not None:
                    c.close(f"{name}: {sname} y", r[1], y)
                if "row" in sp:
                    c.equal(f"{name}: {sname} row", r[sh.index("row")], sp["row"] + 1)
                c.close(f"{name}: {sname} switch", r[sh.index("switch point")], sp["x"])
                c.equal(f"{name}: {sname} below/above", (r[sh.index("below")],
                                                         r[sh.index("above")]),
                        (sp["from"], sp["to"]))
    risk = "Bayes payoff" if payoff else "Bayes risk"
    titles = chart_titles(ws)
    if "y" in sw:
        check_grid(c, name, j, ws, sw, r0, lambda p: oriented(j, p, "bayes_risk", "bayes_payoff"))
        c.equal(f"{name}: {tname} charts", titles,
                [f"{risk} against {sw['x']}, one line per {sw['y']}"])
    else:
        c.ok(f"{name}: {tname} risk chart", titles and titles[0] ==
             f"{risk} and EVPI against {sw['x']}", repr(titles))
        if not estimate and len(actions) > 1:
            c.ok(f"{name}: {tname} rates chart", f"Choice rates against {sw['x']}" in titles,
                 repr(titles))
    check_widths(c, name, ws, [t for t in ws.tables])


def check_threshold_sweep(c, name, j, ws, k, sw):
    unit = unit_of(j)
    payoff = j["orientation"] == "payoff"
    orient = j["orientation"]
    actions = j["problem"].get("actions", [])
    tname = f"sweep_{k + 1}"
    h, rows, (r0, _) = table(ws, tname)
    pts = sw["points"]
    c.equal(f"{name}: {tname} rows", len(rows), len(pts))
    col = {v: i for i, v in enumerate(h)}
    c.ok(f"{name}: {tname} threshold column", h[0].startswith("threshold: "), h[0])
    el_head = f"expected {orient} ({unit} per decision)"
    c.ok(f"{name}: {tname} has {el_head}", el_head in col, repr(h))
    hits = "hit_rate" in pts[0]
    sdt = any("c" in p for p in pts)
    for i, (r, p) in enumerate(zip(rows, pts)):
        c.close(f"{name}: {tname} threshold {i}", r[0], p["x"])
        if "y" in sw:
            c.close(f"{name}: {tname} y {i}", r[1], p["y"])
        for (a, s), v in rate_pairs(j, p["rates"], actions):
            head = f"P({a} | {s})" if s is not None else f"P({a})"
            if c.ok(f"{name}: {tname} has {head}", head in col, repr(h)):
                number_or_none(c, f"{name}: {tname} {head} {i}", r[col[head]], v)
        if hits:
            hh = f"hit rate: P({actions[1]} | {j['problem']['states']['labels'][1]})"
            fh = f"false-alarm rate: P({actions[1]} | {j['problem']['states']['labels'][0]})"
            c.close(f"{name}: {tname} hit rate {i}", r[col[hh]], p["hit_rate"])
            c.close(f"{name}: {tname} false-alarm rate {i}", r[col[fh]], p["false_alarm_rate"])
        c.close(f"{name}: {tname} expected {i}", r[col[el_head]],
                oriented(j, p, "expected_loss", "expected_payoff"))
        if sdt:
            number_or_none(c, f"{name}: {tname} c {i}", r[col["c"]], p.get("c"))
            number_or_none(c, f"{name}: {tname} beta {i}", r[col["β"]], p.get("beta"))
    # The nearest threshold to each Bayes threshold is marked.
    rows_y = sw.get("by_y") or [sw]
    nx = len(pts) // len(rows_y)
    for jy, ry in enumerate(rows_y):
        block = rows[jy * nx:(jy + 1) * nx]
        marked = [i for i, r in enumerate(block) if r[col["note"]]]
        bt = ry["bayes_threshold"]
        want = [] if bt is None else [min(range(nx),
                                          key=lambda i: abs(pts[jy * nx + i]["x"] - bt))]
        c.equal(f"{name}: {tname} Bayes threshold marked", marked, want)
    titles = chart_titles(ws)
    if hits:
        c.ok(f"{name}: ROC chart", "ROC: hit rate against false-alarm rate" in titles,
             repr(titles))
    if "y" in sw:
        rh, rrows, _ = table(ws, f"sweep_{k + 1}_threshold")
        c.equal(f"{name}: by-y rows", len(rrows), len(sw["by_y"]))
        for r, ry in zip(rrows, sw["by_y"]):
            c.close(f"{name}: by-y y", r[0], ry["y"])
            number_or_none(c, f"{name}: by-y Bayes threshold", r[1], ry["bayes_threshold"])
            c.close(f"{name}: by-y expected", r[2],
                    oriented(j, ry, "bayes_threshold_expected_loss",
                             "bayes_threshold_expected_payoff"))
            number_or_none(c, f"{name}: by-y Bayes risk", r[3],
                           oriented(j, ry, "bayes_risk", "bayes_payoff"))
            if "d_prime" in ry:
                c.close(f"{name}: by-y d'", r[rh.index("d′")], ry["d_prime"])
            f = ry["flatness"]
            for lv, pct in enumerate(PCT):
                number_or_none(c, f"{name}: by-y within {pct} from", r[rh.index(f"within {pct} from")],
                               f["ranges"][lv]["from"] if f else None)
                number_or_none(c, f"{name}: by-y within {pct} to", r[rh.index(f"within {pct} to")],
                               f["ranges"][lv]["to"] if f else None)
        check_grid(c, name, j, ws, sw, r0,
                   lambda p: oriented(j, p, "expected_loss", "expected_payoff"))
        c.ok(f"{name}: Bayes threshold against y chart",
             f"The Bayes threshold against {sw['y']}" in titles, repr(titles))
    else:
        if sw["bayes_threshold"] is not None:
            c.close(f"{name}: Bayes threshold", info_value(ws, "Bayes threshold ("),
                    sw["bayes_threshold"])
        c.close(f"{name}: expected at the Bayes threshold",
                info_value(ws, f"Expected {orient} at the Bayes threshold"),
                oriented(j, sw, "bayes_threshold_expected_loss", "bayes_threshold_expected_payoff"))
        if "d_prime" in sw:
            c.close(f"{name}: d'", info_value(ws, "d′"), sw["d_prime"])
        if sw["flatness"] is not None:
            fh, frows, _ = table(ws, f"sweep_{k + 1}_flatness")
            for r, want in zip(frows, sw["flatness"]["ranges"]):
                c.close(f"{name}: flatness within", r[0], want["within"])
                for got, w, word in ((r[1], want["from"], "no lower end"),
                                     (r[2], want["to"], "no upper end")):
                    if w is None:
                        c.equal(f"{name}: flatness open end", got, word)
                    else:
                        c.close(f"{name}: flatness end", got, w)
        title = f"Expected {orient} of each threshold, the Bayes threshold marked"
        if c.ok(f"{name}: expected-score chart", title in titles, repr(titles)):
            chart = ws._charts[titles.index(title)]
            c.equal(f"{name}: Bayes threshold series", len(chart.series),
                    2 if sw["bayes_threshold"] is not None else 1)
    check_widths(c, name, ws, [t for t in ws.tables])


def check_designs_sheet(c, name, j, ws):
    h, rows, _ = table(ws, "designs")
    c.equal(f"{name}: designs", [r[0] for r in rows], [d["name"] for d in j["designs"]])
    for r, d in zip(rows, j["designs"]):
        g = dict(zip(h, r))
        action = d["goal"] == "action"
        c.equal(f"{name}: {d['name']} path", g["path varied"], d["vary"])
        c.close(f"{name}: {d['name']} from", g["bracket from"], d["from"])
        c.close(f"{name}: {d['name']} to", g["bracket to"], d["to"])
        c.equal(f"{name}: {d['name']} goal", g["goal"], d["goal"])
        if action:
            c.equal(f"{name}: {d['name']} target", g["target"], d["equals"])
        else:
            c.close(f"{name}: {d['name']} target", g["target"], d["equals"])
        c.equal(f"{name}: {d['name']} reached", g["reached"], "yes" if d["reached"] else "no")
        number_or_none(c, f"{name}: {d['name']} value", g["value found"], d["value"])
        number_or_none(c, f"{name}: {d['name']} achieved", g["goal there"], d.get("achieved"))
        rng = d.get("range")
        if rng is not None and not action:
            number_or_none(c, f"{name}: {d['name']} range low", g["goal spans from"], rng[0])
            number_or_none(c, f"{name}: {d['name']} range high", g["goal spans to"], rng[1])
        elif rng is not None:
            c.equal(f"{name}: {d['name']} actions seen", g["Bayes actions seen"], ", ".join(rng))
        else:
            c.equal(f"{name}: {d['name']} no range", (g["goal spans from"], g["goal spans to"]),
                    (None, None))
        if "note" in d:
            c.equal(f"{name}: {d['name']} note", g["note"], d["note"])
        c.equal(f"{name}: {d['name']} problems solved", g["problems solved"], d["evaluations"])
    check_widths(c, name, ws, ["designs"])


def check_simulation_sheet(c, name, j, ws):
    sim = j["simulation"]
    unit = unit_of(j)
    orient = j["orientation"]
    h, rows, (r0, _) = table(ws, "simulation")
    c.equal(f"{name}: simulation rules", [r[0] for r in rows], [m["rule"] for m in sim["rules"]])
    pt, ps = f"{unit} per trial", f"{unit} per session"
    keys = [(f"analytic ({pt})", "analytic"), (f"mean {orient} ({pt})", "mean_per_trial"),
            (f"95% interval from ({pt})", ("ci95", 0)), (f"95% interval to ({pt})", ("ci95", 1)),
            (f"sd per trial ({unit})", "sd_per_trial"), (f"mean {orient} ({ps})", "mean_per_session"),
            (f"95% interval from ({ps})", ("session_ci95", 0)),
            (f"95% interval to ({ps})", ("session_ci95", 1)),
            (f"5% of sessions below ({unit})", ("session_percentiles", "p05")),
            (f"median session ({unit})", ("session_percentiles", "p50")),
            (f"95% of sessions below ({unit})", ("session_percentiles", "p95"))]
    if "floor" in sim:
        keys.append((f"sessions below {sim['floor']:.6g} {unit}", "below_floor"))
    if "bayes_estimate" in j["case"]:
        su = j["problem"]["unit"] or "state units"
        keys += [(f"mean error ({su})", "mean_error"),
                 (f"mean absolute error ({su})", "mean_absolute_error")]
    for head, _ in keys:
        c.ok(f"{name}: simulation has {head}", head in h, repr(h))
    for r, m in zip(rows, sim["rules"]):
        g = dict(zip(h, r))
        for head, key in keys:
            if head not in g:
                continue
            if isinstance(key, tuple):
                want = m[key[0]][key[1]] if key[0] in m else None
            else:
                want = m.get(key)
            number_or_none(c, f"{name}: {m['rule']} {head}", g[head], want)
        if not m["simulated"]:
            c.equal(f"{name}: {m['rule']} says why", g["note"],
                    "not simulated: " + m["not_simulated"])
        elif m["analytic"] is not None:
            inside = m["ci95"][0] <= m["analytic"] <= m["ci95"][1]
            c.equal(f"{name}: {m['rule']} analytic in the interval",
                    g["analytic in the interval"], "inside" if inside else "outside")
        if "floor" in sim and m["simulated"]:
            head = f"sessions below {sim['floor']:.6g} {unit}"
            c.equal(f"{name}: below floor as a percentage",
                    ws.cell(r0 + 1 + rows.index(r), 1 + h.index(head)).number_format, "0.00%")
    simulated = [m for m in sim["rules"] if m["simulated"]]
    if "rates" in (simulated[0] if simulated else {}):
        rh, rrows, _ = table(ws, "simulation_rates")
        actions = j["problem"].get("actions", [])
        want = []
        for m in simulated:
            for a in actions:
                v = m["rates"][a]
                want.append((m["rule"], a, list(v.values()) if isinstance(v, dict) else [v]))
        c.equal(f"{name}: simulation_rates rows", [(r[0], r[1]) for r in rrows],
                [(w[0], w[1]) for w in want])
        if simulated and isinstance(simulated[0]["rates"][actions[0]], dict):
            c.equal(f"{name}: simulation_rates columns", rh[2:],
                    [f"share of {s} trials" for s in simulated[0]["rates"][actions[0]]])
        for r, w in zip(rrows, want):
            for got, v in zip(r[2:], w[2]):
                number_or_none(c, f"{name}: rate {w[0]} {w[1]}", got, v)
    hh, hrows, _ = table(ws, "simulation_histogram")
    want = [(m["rule"], m["histogram"]["edges"][b], m["histogram"]["edges"][b + 1], n)
            for m in simulated for b, n in enumerate(m["histogram"]["counts"])]
    c.equal(f"{name}: histogram rows", len(hrows), len(want))
    c.equal(f"{name}: histogram counts", [(r[0], r[3]) for r in hrows],
            [(w[0], w[3]) for w in want])
    for r, w in zip(hrows, want):
        if not (c.close(f"{name}: bin from", r[1], w[1]) and c.close(f"{name}: bin to", r[2], w[2])):
            break
    titles = chart_titles(ws)
    c.equal(f"{name}: histogram charts", titles,
            [f"Session totals under {m['rule']} ({sim['sessions']} sessions of {sim['trials']} "
             f"trials)" for m in simulated][:8])
    c.equal(f"{name}: Simulation shows the seed", info_value(ws, "Seed"), sim["seed"])
    check_widths(c, name, ws, [t for t in ws.tables])


def check_study_sheets(c, name, j, wb, names, text):
    """Every sheet of the studies against the JSON; returns nothing, counts in c."""
    check_summary(c, name, j, wb, names)
    if j["rules"]:
        check_rules_sheet(c, name, j, wb["Rules"], text)
    if j["value"] is not None:
        check_value_sheet(c, name, j, wb["Value"])
    for k, (sw, sheet) in enumerate(zip(j["sweeps"], sweep_sheet_names(j))):
        ws = wb[sheet]
        c.ok(f"{name}: sheet {sheet} is sweep {sw['name']}",
             f"sweep_{k + 1}" in ws.tables and any(
                 isinstance(v, str) and v.startswith(f"Sweep {sw['name']}:")
                 for v in sheet_text(ws)))
        if sw["kind"] == "threshold":
            check_threshold_sweep(c, name, j, ws, k, sw)
        else:
            check_path_sweep(c, name, j, ws, k, sw)
        c.equal(f"{name}: {sheet} frozen under its header", ws.freeze_panes,
                f"A{table(ws, f'sweep_{k + 1}')[2][0] + 1}")
    if j["designs"]:
        check_designs_sheet(c, name, j, wb["Designs"])
    if j.get("simulation"):
        check_simulation_sheet(c, name, j, wb["Simulation"])


# --- the CSV folder -----------------------------------------------------------------------

def num(field):
    return None if field == "" else float(field)


def check_study_csv(c, name, j, folder, files, read_csv):
    """Every CSV table of the studies against the JSON (exact), and the files' names."""
    payoff = j["orientation"] == "payoff"
    actions = j["problem"].get("actions", [])
    ih, irows = read_csv(os.path.join(folder, "index.csv"))
    index = [r[0] for r in irows]
    present = {f: f in files for f in ("rules.csv", "value_extra.csv", "value_case_next.csv",
                                       "designs.csv", "simulation.csv",
                                       "simulation_histogram.csv")}
    c.equal(f"{name}: rules.csv present", present["rules.csv"], bool(j["rules"]))
    c.equal(f"{name}: designs.csv present", present["designs.csv"], bool(j["designs"]))
    c.equal(f"{name}: simulation.csv present", present["simulation.csv"],
            bool(j.get("simulation")))
    c.equal(f"{name}: value_extra.csv present", present["value_extra.csv"],
            bool(j["value"] and j["value"]["extra"]))
    h, rows = read_csv(os.path.join(folder, "summary.csv"))
    summary = {r[0]: r[1] for r in rows}
    for k, v in study_names(j).items():
        got = summary.get(k)
        c.equal(f"{name}: summary.csv {k}", got if isinstance(v, str) else
                (float(got) if got is not None else None), v)
    if j.get("simulation"):
        c.equal(f"{name}: summary.csv seed", summary.get("seed"), str(j["simulation"]["seed"]))

    if j["rules"]:
        h, rows = read_csv(os.path.join(folder, "rules.csv"))
        word = "payoff" if payoff else "risk"
        c.equal(f"{name}: rules.csv header", h, ["rule", "kind", word, "regret", "not_computed"])
        rule = j["rule"]
        want = [["bayes", "bayes", rule.get("bayes_payoff" if payoff else "bayes_risk")
                 if rule["computed"] else None, 0.0 if rule["computed"] else None]]
        want += [[r["name"], r["kind"], r.get(word), r.get("regret")] for r in j["rules"]]
        c.equal(f"{name}: rules.csv", [[r[0], r[1], num(r[2]), num(r[3])] for r in rows], want)
        c.equal(f"{name}: rules.csv reasons", [r[4] for r in rows[1:]],
                [r.get("not_computed", "") for r in j["rules"]])

    value = j["value"]
    if value and value["extra"]:
        h, rows = read_csv(os.path.join(folder, "value_extra.csv"))
        c.equal(f"{name}: value_extra.csv header", h,
                ["channel", "n", "evsi", "cost", "net", "on_the_mean", "not_computed"])
        c.equal(f"{name}: value_extra.csv", [[r[0], int(r[1]), num(r[2]), num(r[3]), num(r[4]),
                                              r[5]] for r in rows],
                [[x["channel"], x["n"], x["evsi"], x["n"] * value["cost"], x["net"],
                  "1" if x.get("on_the_mean") else "0"] for x in value["extra"]])
    if value and value["case_next"]:
        h, rows = read_csv(os.path.join(folder, "value_case_next.csv"))
        c.equal(f"{name}: value_case_next.csv", [[r[0], num(r[1])] for r in rows],
                [[x["channel"], x["value"]] for x in value["case_next"]])

    first = next((i for i, f in enumerate(index) if f.lower().startswith("sweep_")), len(index))
    bases = sweep_csv_bases(j, index[:first])
    for sw, base in zip(j["sweeps"], bases):
        pts = sw["points"]
        c.ok(f"{name}: {base}.csv listed", base + ".csv" in index)
        if base + ".csv" not in files:
            continue
        h, rows = read_csv(os.path.join(folder, base + ".csv"))
        c.equal(f"{name}: {base}.csv rows", len(rows), len(pts))
        col = {v: i for i, v in enumerate(h)}
        c.equal(f"{name}: {base}.csv x", [float(r[0]) for r in rows], [p["x"] for p in pts])
        if "y" in sw:
            c.equal(f"{name}: {base}.csv y", [float(r[col["y"]]) for r in rows],
                    [p["y"] for p in pts])
        rate_cols = [(f"P({a}|{s})" if s is not None else f"P({a})", v)
                     for p in pts[:1] for (a, s), v in rate_pairs(j, p["rates"], actions)]
        if sw["kind"] == "threshold":
            key = "expected_payoff" if payoff else "expected_loss"
            c.equal(f"{name}: {base}.csv {key}", [num(r[col[key]]) for r in rows],
                    [p[key] for p in pts])
            for extra in ("hit_rate", "false_alarm_rate", "c", "beta"):
                if extra in pts[0] or extra in col:
                    c.equal(f"{name}: {base}.csv {extra}", [num(r[col[extra]]) for r in rows],
                            [p.get(extra) for p in pts])
            for i, p in enumerate(pts):
                for (a, s), v in rate_pairs(j, p["rates"], actions[:2]):
                    head = f"P({a}|{s})" if s is not None else f"P({a})"
                    c.equal(f"{name}: {base}.csv {head}", num(rows[i][col[head]]), v)
            h2, rows2 = read_csv(os.path.join(folder, base + "_threshold.csv"))
            by = sw.get("by_y") or [sw]
            c.equal(f"{name}: {base}_threshold.csv rows", len(rows2), len(by))
            col2 = {v: i for i, v in enumerate(h2)}
            bkey = "bayes_threshold_expected_payoff" if payoff else "bayes_threshold_expected_loss"
            rkey = "bayes_payoff" if payoff else "bayes_risk"
            for r, b in zip(rows2, by):
                c.equal(f"{name}: {base}_threshold.csv", [num(r[col2["bayes_threshold"]]),
                                                          num(r[col2[bkey]]), num(r[col2[rkey]])],
                        [b["bayes_threshold"], b[bkey], b[rkey]])
                if "y" in sw:
                    c.equal(f"{name}: {base}_threshold.csv y", float(r[col2["y"]]), b["y"])
                if "d_prime" in b:
                    c.equal(f"{name}: {base}_threshold.csv d'", float(r[col2["d_prime"]]),
                            b["d_prime"])
                f = b["flatness"]
                got = [num(r[col2[f"within_{w}_{e}"]]) for w in FLAT for e in ("from", "to")]
                want = [f["ranges"][lv][e] if f else None for lv in range(3) for e in ("from", "to")]
                c.equal(f"{name}: {base}_threshold.csv flatness", got, want)
            continue
        rkey = "bayes_payoff" if payoff else "bayes_risk"
        c.equal(f"{name}: {base}.csv {rkey}", [num(r[col[rkey]]) for r in rows],
                [p[rkey] for p in pts])
        c.equal(f"{name}: {base}.csv evpi", [num(r[col["evpi"]]) for r in rows],
                [p["evpi"] for p in pts])
        c.equal(f"{name}: {base}.csv computed", [r[col["computed"]] for r in rows],
                ["1" if p["computed"] else "0" for p in pts])
        if "bayes_estimate" in j["case"]:
            c.equal(f"{name}: {base}.csv case_estimate", [float(r[col["case_estimate"]])
                                                          for r in rows],
                    [p["case_action"] for p in pts])
            continue
        c.equal(f"{name}: {base}.csv case_action", [r[col["case_action"]] for r in rows],
                [p["case_action"] for p in pts])
        for head, _ in rate_cols:
            c.ok(f"{name}: {base}.csv has {head}", head in col, repr(h))
        for i, p in enumerate(pts):
            for (a, s), v in rate_pairs(j, p["rates"], actions):
                head = f"P({a}|{s})" if s is not None else f"P({a})"
                if head in col:
                    c.equal(f"{name}: {base}.csv {head} {i}", num(rows[i][col[head]]), v)
        h3, rows3 = read_csv(os.path.join(folder, base + "_switch_points.csv"))
        want = [(p["x"], p.get("y"), sp) for p in pts for sp in p["switch_points"]]
        c.equal(f"{name}: {base}_switch_points.csv rows", len(rows3), len(want))
        col3 = {v: i for i, v in enumerate(h3)}
        for r, (x, y, sp) in zip(rows3, want):
            got = (float(r[0]), float(r[col3["switch_point"]]), r[col3["from"]], r[col3["to"]])
            c.equal(f"{name}: {base}_switch_points.csv", got, (x, sp["x"], sp["from"], sp["to"]))
            if "row" in sp:
                c.equal(f"{name}: {base}_switch_points.csv row", int(r[col3["row"]]),
                        sp["row"] + 1)

    if j["designs"]:
        h, rows = read_csv(os.path.join(folder, "designs.csv"))
        for r, d in zip(rows, j["designs"]):
            g = dict(zip(h, r))
            action = d["goal"] == "action"
            rng = d.get("range")
            got = [g["name"], g["vary"], float(g["from"]), float(g["to"]), g["goal"],
                   g["equals"] if action else float(g["equals"]), g["reached"], num(g["value"]),
                   num(g["achieved"]), num(g["range_low"]), num(g["range_high"]),
                   g["actions_seen"], g["note"], int(g["evaluations"])]
            want = [d["name"], d["vary"], d["from"], d["to"], d["goal"], d["equals"],
                    "1" if d["reached"] else "0", d["value"], d.get("achieved"),
                    rng[0] if rng and not action else None,
                    rng[1] if rng and not action else None,
                    " ".join(rng) if rng and action else "", d.get("note", ""), d["evaluations"]]
            c.equal(f"{name}: designs.csv {d['name']}", got, want)
        c.equal(f"{name}: designs.csv rows", len(rows), len(j["designs"]))

    sim = j.get("simulation")
    if sim:
        h, rows = read_csv(os.path.join(folder, "simulation.csv"))
        c.equal(f"{name}: simulation.csv rows", [r[0] for r in rows],
                [m["rule"] for m in sim["rules"]])
        for r, m in zip(rows, sim["rules"]):
            g = dict(zip(h, r))
            s = m["simulated"]
            want = {"analytic": m["analytic"], "mean_per_trial": m.get("mean_per_trial"),
                    "sd_per_trial": m.get("sd_per_trial"),
                    "ci95_low": m["ci95"][0] if s else None,
                    "ci95_high": m["ci95"][1] if s else None,
                    "mean_per_session": m.get("mean_per_session"),
                    "session_ci95_low": m["session_ci95"][0] if s else None,
                    "session_ci95_high": m["session_ci95"][1] if s else None,
                    "p05": m["session_percentiles"]["p05"] if s else None,
                    "p50": m["session_percentiles"]["p50"] if s else None,
                    "p95": m["session_percentiles"]["p95"] if s else None}
            if "floor" in sim:
                want["below_floor"] = m.get("below_floor")
            if "bayes_estimate" in j["case"]:
                want["mean_error"] = m.get("mean_error")
                want["mean_absolute_error"] = m.get("mean_absolute_error")
            c.equal(f"{name}: simulation.csv {m['rule']}", {k: num(g[k]) for k in want}, want)
            c.equal(f"{name}: simulation.csv {m['rule']} simulated", g["simulated"],
                    "1" if s else "0")
            c.equal(f"{name}: simulation.csv {m['rule']} reason", g["not_simulated"],
                    m.get("not_simulated", ""))
        simulated = [m for m in sim["rules"] if m["simulated"]]
        if "bayes_estimate" not in j["case"]:
            h, rows = read_csv(os.path.join(folder, "simulation_rates.csv"))
            want = []
            for m in simulated:
                for a in actions:
                    if isinstance(m["counts"][a], dict):
                        for st, n in m["counts"][a].items():
                            want.append([m["rule"], a, st, m["state_trials"][st], n,
                                         m["rates"][a][st]])
                    else:
                        total = sum(m["counts"][b] for b in actions)
                        want.append([m["rule"], a, "", total, m["counts"][a], m["rates"][a]])
            c.equal(f"{name}: simulation_rates.csv",
                    [[r[0], r[1], r[2], int(r[3]), int(r[4]), num(r[5])] for r in rows], want)
        else:
            c.ok(f"{name}: no simulation_rates.csv for estimates",
                 "simulation_rates.csv" not in files)
        h, rows = read_csv(os.path.join(folder, "simulation_histogram.csv"))
        want = [[m["rule"], m["histogram"]["edges"][b], m["histogram"]["edges"][b + 1], n]
                for m in simulated for b, n in enumerate(m["histogram"]["counts"])]
        c.equal(f"{name}: simulation_histogram.csv",
                [[r[0], float(r[1]), float(r[2]), int(r[3])] for r in rows], want)
