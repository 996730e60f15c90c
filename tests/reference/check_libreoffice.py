#!/usr/bin/python3
"""Recalculates lopside's workbooks with LibreOffice and compares the live formulas with the
engine's JSON; renders every workbook to PDF to see that its pages, the sheets of the studies
(Rules, Value, one per sweep, Designs, Simulation) and their charts are drawn; edits a payoff
with openpyxl and checks that the Bayes action flips as a hand calculation says.

Run by tests/check_libreoffice.sh (which installs LibreOffice where it can), from the
repository root, with SOFFICE set to the soffice command. Follows the project's LibreOffice
notes: a private profile, OOXMLRecalcMode=0 so formulas are recalculated on load, every sheet
converted to its own CSV file.

To be sure the numbers come from LibreOffice's recalculation and not from the values lopside
caches beside each formula, every workbook is first copied with all cached formula results set
to 0; the copies are what LibreOffice converts.

Tolerance: relative 1e-9 against the JSON. LibreOffice prints 15 significant digits in CSV and
computes the posterior with its own EXP, LN and NORM.DIST; both agree with the engine's doubles
far inside 1e-9, while a wrong formula (a missing state, a swapped row) is off by far more.

Ends with `N passed, M failed`.
"""

import csv
import os
import re
import shutil
import subprocess
import sys
import tempfile
import traceback
import zipfile

import openpyxl

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import check_workbook as cw  # noqa: E402  (the problems and readers are shared)
import workbook_studies as studies  # noqa: E402

SOFFICE = os.environ.get("SOFFICE", "soffice")
REL = 1e-9
RECALC_ITEM = ('<item oor:path="/org.openoffice.Office.Calc/Formula/Load">'
               '<prop oor:name="OOXMLRecalcMode" oor:op="fuse"><value>0</value></prop></item>')
CSV_FILTER = "csv:Text - txt - csv (StarCalc):44,34,UTF8,1,,0,false,true,false,false,false,-1"


def soffice(profile, args, cwd):
    cmd = [SOFFICE, "--headless", "--norestore", f"-env:UserInstallation=file://{profile}"] + args
    res = subprocess.run(cmd, cwd=cwd, capture_output=True, text=True, timeout=600)
    if res.returncode != 0:
        raise RuntimeError(f"soffice failed: {res.stderr}")
    return res


def make_profile(tmp):
    """A private profile with recalculation on load switched on."""
    profile = os.path.join(tmp, "lo-profile")
    seed = os.path.join(tmp, "seed.csv")
    with open(seed, "w") as f:
        f.write("1\n")
    soffice(profile, ["--convert-to", "xlsx", "--outdir", os.path.join(tmp, "seed"), seed], tmp)
    xcu = os.path.join(profile, "user", "registrymodifications.xcu")
    with open(xcu, encoding="utf-8") as f:
        text = f.read()
    if "OOXMLRecalcMode" not in text:
        text = text.replace("</oor:items>", RECALC_ITEM + "\n</oor:items>")
        with open(xcu, "w", encoding="utf-8") as f:
            f.write(text)
    return profile


def stale_copy(src, dst):
    """Copies an XLSX with every cached formula result replaced by 0."""
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        for item in zin.infolist():
            data = zin.read(item.filename)
            if item.filename.startswith("xl/worksheets/sheet"):
                text = data.decode("utf-8")
                text = re.sub(r"(<f>[^<]*</f>)<v>[^<]*</v>", r"\1<v>0</v>", text)
                data = text.encode("utf-8")
            zout.writestr(item, data)


def lo_sheet(folder, base, sheet):
    with open(os.path.join(folder, f"{base}-{sheet}.csv"), newline="", encoding="utf-8") as f:
        return list(csv.reader(f))


def cell(rows, row, col):
    """Value at 1-based (row, col) of a LibreOffice CSV sheet, '' past its end."""
    if row - 1 >= len(rows) or col - 1 >= len(rows[row - 1]):
        return ""
    return rows[row - 1][col - 1]


def number(text):
    return float(text)


def check_recalculated(c, name, j, xlsx, lo_case, lo_summary):
    """LibreOffice's values of the live cells against the JSON."""
    wb = openpyxl.load_workbook(xlsx)
    orient = j["orientation"]
    key = "expected_payoff" if orient == "payoff" else "expected_loss"
    kase = j["case"]
    h, rows, (r0, c0) = cw.table(wb["Case"], "posterior")
    for s, want in enumerate(kase["posterior"]["p"]):
        got = number(cell(lo_case, r0 + 1 + s, c0 + h.index("posterior")))
        c.close(f"{name}: recalculated posterior {s + 1}", got, want, REL)
    h, rows, (r0, c0) = cw.table(wb["Case"], "actions")
    for a, want in enumerate(kase["actions"]):
        got = number(cell(lo_case, r0 + 1 + a, c0 + 1))
        c.close(f"{name}: recalculated expected score of {want['action']}", got, want[key], REL)
    names = cw.names_of(wb)
    for n, want in (("bayes_action", kase["bayes_action"]), ("runner_up", kase["runner_up"])):
        r, col = openpyxl.utils.cell.coordinate_to_tuple(names[n][1])
        c.equal(f"{name}: recalculated {n} on the Summary", cell(lo_summary, r, col), want)
    score_name = "case_expected_payoff" if orient == "payoff" else "case_expected_loss"
    for n, want in ((score_name, kase[key]), ("margin", kase["margin"]), ("evpi", kase["evpi"])):
        r, col = openpyxl.utils.cell.coordinate_to_tuple(names[n][1])
        c.close(f"{name}: recalculated {n} on the Summary", number(cell(lo_summary, r, col)),
                want, REL)


def make_variant(xlsx, dst, j):
    """Raises the payoff of say_yes when the tone is present from 4 to 10 in the demo's
    workbook, keeping every formula. Returns the hand-computed expected payoffs."""
    wb = openpyxl.load_workbook(xlsx)
    ws = wb["Case"]
    h, rows, (r0, c0) = cw.table(ws, "payoff")
    states = [r[0] for r in rows]
    row = r0 + 1 + states.index("present")
    col = c0 + h.index("say_yes (points)")
    if ws.cell(row, col).value != 4:
        raise RuntimeError("the demo's payoff for say_yes when present is not 4")
    ws.cell(row, col).value = 10
    wb.save(dst)
    post = dict(zip(states, j["case"]["posterior"]["p"]))
    # Hand calculation from the demo's payoff table with the one change.
    payoff = {"say_no": {"absent": 1, "present": -2}, "say_yes": {"absent": -3, "present": 10}}
    return {a: sum(post[s] * v for s, v in row.items()) for a, row in payoff.items()}


def check_variant(c, lo_case, lo_summary, xlsx, expected, j):
    wb = openpyxl.load_workbook(xlsx)
    want = max(expected, key=lambda a: (expected[a], a == "say_no"))
    c.ok("variant: the hand calculation flips the decision", want != j["case"]["bayes_action"],
         f"{want} vs {j['case']['bayes_action']}")
    h, rows, (r0, c0) = cw.table(wb["Case"], "actions")
    for i, r in enumerate(rows):
        got = number(cell(lo_case, r0 + 1 + i, c0 + 1))
        c.close(f"variant: expected payoff of {r[0]}", got, expected[r[0]], REL)
    names = cw.names_of(wb)
    r, col = openpyxl.utils.cell.coordinate_to_tuple(names["bayes_action"][1])
    c.equal("variant: Bayes action on the Summary", cell(lo_summary, r, col), want)
    cited = wb["Summary"][names["bayes_action"][1]].value[len("=Case!"):].replace("$", "")
    r, col = openpyxl.utils.cell.coordinate_to_tuple(cited)
    c.equal("variant: Bayes action on the Case sheet", cell(lo_case, r, col), want)
    r, col = openpyxl.utils.cell.coordinate_to_tuple(names["margin"][1])
    c.close("variant: margin", number(cell(lo_summary, r, col)),
            abs(expected["say_yes"] - expected["say_no"]), REL)


# Sheets whose title (A1) and chart titles must appear in the PDF: the studies' sheets.
STUDY_SHEETS = ("Rules", "Value", "Designs", "Simulation")


def study_sheets(wb, j):
    """The sheets of the studies in workbook wb of run j."""
    sweeps = studies.sweep_sheet_names(j)
    return [ws for ws in wb.worksheets if ws.title in STUDY_SHEETS or ws.title in sweeps]


def check_pdf(c, name, pdf, sheets, charts, titles=()):
    info = subprocess.run(["pdfinfo", pdf], capture_output=True, text=True).stdout
    pages = int(re.search(r"Pages:\s+(\d+)", info).group(1))
    c.ok(f"{name}: PDF has a page per sheet at least", pages >= len(sheets), f"{pages} pages")
    empty = []
    for p in range(1, pages + 1):
        text = subprocess.run(["pdftotext", "-f", str(p), "-l", str(p), pdf, "-"],
                              capture_output=True, text=True).stdout
        if not text.strip():
            empty.append(p)
    c.ok(f"{name}: no empty PDF page", not empty, f"empty pages {empty}")
    text = " ".join(subprocess.run(["pdftotext", pdf, "-"], capture_output=True,
                                   text=True).stdout.split())
    for title in charts:
        c.ok(f"{name}: chart drawn: {title}", title in text)
    for title in titles:
        c.ok(f"{name}: sheet drawn: {title}", " ".join(title.split()) in text)


def main():
    c = cw.Checks()
    tmp = tempfile.mkdtemp(prefix="lopside-lo-")
    try:
        profile = make_profile(tmp)
        books, stale, runs = [], [], {}
        for name, ini, text in cw.problems(tmp):
            j, xlsx, _ = cw.solve(name, ini, tmp)
            book = os.path.join(tmp, f"{name}.xlsx")
            shutil.copy(xlsx, book)
            stale_copy(book, os.path.join(tmp, f"stale_{name}.xlsx"))
            books.append(book)
            stale.append(os.path.join(tmp, f"stale_{name}.xlsx"))
            runs[name] = j
        expected = make_variant(os.path.join(tmp, "demo.xlsx"), os.path.join(tmp, "variant.xlsx"),
                                runs["demo"])
        out = os.path.join(tmp, "lo")
        soffice(profile, ["--convert-to", CSV_FILTER, "--outdir", out] + stale +
                [os.path.join(tmp, "variant.xlsx")], tmp)
        soffice(profile, ["--convert-to", "pdf", "--outdir", out] + books, tmp)
        for name, j in runs.items():
            try:
                if cw.is_live(j):
                    check_recalculated(c, name, j, os.path.join(tmp, f"{name}.xlsx"),
                                       lo_sheet(out, f"stale_{name}", "Case"),
                                       lo_sheet(out, f"stale_{name}", "Summary"))
                wb = openpyxl.load_workbook(os.path.join(tmp, f"{name}.xlsx"))
                charts = ["Prior and posterior of each state"]
                if j["rule"] and j["rule"]["computed"]:
                    charts.append("The Bayes estimate at each measurement"
                                  if "bayes_estimate" in j["case"]
                                  else "The Bayes action at each measurement" if "grid" in j["rule"]
                                  else "Probability of each outcome combination")
                titles = []
                for ws in study_sheets(wb, j):
                    titles.append(ws["A1"].value)
                    charts += [t for t in studies.chart_titles(ws) if t]
                check_pdf(c, name, os.path.join(out, f"{name}.pdf"), wb.sheetnames, charts,
                          titles)
                print(f"ok {name}" + ("" if cw.is_live(j) else
                                      " (values only: nothing to recalculate)"))
            except Exception:
                c.ok(f"{name} checked", False, traceback.format_exc())
        check_variant(c, lo_sheet(out, "variant", "Case"), lo_sheet(out, "variant", "Summary"),
                      os.path.join(tmp, "variant.xlsx"), expected, runs["demo"])
    except Exception:
        c.ok("LibreOffice run", False, traceback.format_exc())
    finally:
        if c.failed:
            print(f"files kept in {tmp}")
        else:
            shutil.rmtree(tmp)
    print(f"{c.passed} passed, {c.failed} failed")
    return 1 if c.failed else 0


if __name__ == "__main__":
    sys.exit(main())
