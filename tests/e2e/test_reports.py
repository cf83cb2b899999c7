"""Reports people can file and scripts can read, through the built executable.

1. `cat` of three CSV reports (the three demo captures: audio, if and iq; two with a limits
   profile) is one table: with the documented header line put once in front (README "Reports"),
   Python's csv module reads every row with exactly those columns; the limit and margin columns
   are numbers (or empty); each margin is the distance from the value to its limit and its sign
   matches the verdict; the values equal the JSON report's to the printed precision. README's
   header line is the one io/report.h defines (ML_REPORT_CSV_COLUMNS).
2. No negative zero ("-0", "-0.00" ...) in any format (text, JSON, CSV, the PDF record's text) for
   the three demo captures, nor in compare's text, JSON and CSV.
3. A PDF record made with a limits profile in a folder of over 1000 characters, so that the command
   line is longer than 1024 characters: pdftotext of the record holds the whole command line and
   the whole limits path (whitespace ignored: the record wraps long lines).
4. A saved JSON report whose reasons, qualifiers and bounds are filled in (as the analysis will
   write them) is read back by compare; a fresh report has the three objects, empty.
The reasons and qualifiers themselves in JSON, text and CSV are unit-tested on a hand-built report
(tests/unit/test_io_report.c): the analysis does not set them yet.
"""
import json
import os
import re
import shutil
import subprocess
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_common as E  # noqa: E402

HERE = os.path.dirname(os.path.abspath(__file__))
CAPTURES = os.path.join(HERE, "..", "..", "captures")
DEMOS = [("receiver-1khz.wav", "audio"), ("transmitter-if.wav", "if"), ("transmitter-iq.wav", "iq")]
# A negative zero standing as a number: "-0" or "-0.000", not part of a name ("take-0.wav") and not
# followed by other digits ("-0.05" is a negative number).
NEG_ZERO = re.compile(r"(?<![\w.-])-0(?:\.0+)?(?![\d.])")


def decimals_of(text):
    return len(text.split(".")[1]) if "." in text else 0


def number_or_empty(text):
    if text == "":
        return True
    try:
        float(text)
        return True
    except ValueError:
        return False


def json_negative_zeros(text):
    """Number tokens of a JSON text that are a negative zero."""
    bad = []

    def flt(s):
        if float(s) == 0 and s.startswith("-"):
            bad.append(s)
        return float(s)

    def integer(s):
        if int(s) == 0 and s.startswith("-"):
            bad.append(s)
        return int(s)
    json.loads(text, parse_float=flt, parse_int=integer)
    return bad


def pdf_text(path, layout=True):
    args = ["pdftotext"] + (["-layout"] if layout else []) + [path, "-"]
    return subprocess.run(args, capture_output=True, timeout=E.RUN_TIMEOUT_S).stdout.decode("utf-8", "replace")


def check_concatenated_csv(ck, exe):
    with open("bench.ini", "w") as f:  # limits every kind has: audio THD for all, peaks for if/iq
        f.write("[audio]\nthd_pct_max = 1.5\nsnr_db_min = 50\n[modulation]\npositive_peak_pct_max = 125\n"
                "negative_peak_pct_max = 80\n")
    names, reps = [], {}
    for i, (demo, kind) in enumerate(DEMOS):
        src = os.path.join(CAPTURES, demo)
        lim = ["--limits", "bench.ini"] if i > 0 else []
        out = demo.replace(".wav", ".csv")
        rc, _, err = E.run(exe, ["--format", "csv", "--output", out] + lim + [src])
        ck.check("csv report of %s written" % demo, rc in (0, 1) and os.path.exists(out), err.strip())
        rc, rep, _, err = E.run_json(exe, lim + [src])
        reps[src] = rep
        names.append(out)
    cat = subprocess.run(["cat"] + names, capture_output=True, timeout=E.RUN_TIMEOUT_S).stdout.decode()
    cols = E.csv_columns()
    header = ",".join(cols)
    ck.check("the three reports hold no header line (cat gives one table with the one header in front)",
             header not in cat and not any(l.startswith("file,") for l in cat.splitlines()))
    try:
        rows = E.csv_rows(cat)
    except ValueError as e:
        ck.check("every row has every documented column", False, str(e))
        return
    import csv
    import io
    table = list(csv.DictReader(io.StringIO(header + "\n" + cat)))
    ck.check("header + cat parses as one table (csv.DictReader), every row complete",
             len(table) == len(rows) and all(None not in r.values() and None not in r for r in table),
             "%d rows" % len(table))
    files = {r["file"] for r in rows}
    kinds = {r["input_kind"] for r in rows}
    ck.check("three files, three kinds, on every row", len(files) == 3 and kinds == {"audio", "if", "iq"},
             "%r %r" % (files, kinds))
    ck.check("one verdict row per report", sum(r["row_kind"] == "verdict" for r in rows) == 3)
    ck.check("every row has its segment (numbers)", all(
        float(r["start_s"]) >= 0 and float(r["duration_s"]) > 0 for r in rows))
    bad = [(r["file"], r["name"], r["lower_limit"], r["upper_limit"], r["margin"]) for r in rows
           if not (number_or_empty(r["lower_limit"]) and number_or_empty(r["upper_limit"])
                   and number_or_empty(r["margin"]) and number_or_empty(r["value"])
                   and number_or_empty(r["uncertainty"]))]
    ck.check("value, uncertainty, limit and margin columns are numbers or empty", not bad, repr(bad[:3]))
    checked = [r for r in rows if r["row_kind"] == "metric" and r["verdict"]]
    ck.check("checked figures: 2 (if) + 2 (iq) audio and 2 + 2 peak checks", len(checked) == 8,
             repr([(r["file"], r["name"]) for r in checked]))
    for r in checked:
        tag = "%s %s" % (os.path.basename(r["file"]), r["name"])
        if r["value"] == "":
            ck.check(tag + ": not measured, so failed, no margin", r["verdict"] == "fail" and r["margin"] == "")
            continue
        v, margin = float(r["value"]), float(r["margin"])
        lo = float(r["lower_limit"]) if r["lower_limit"] else None
        hi = float(r["upper_limit"]) if r["upper_limit"] else None
        # io/report.h: margin = distance to the nearest limit, positive inside
        want = min(x for x in ((v - lo) if lo is not None else None, (hi - v) if hi is not None else None)
                   if x is not None)
        ck.close(tag + ": margin = distance to its limit", margin, want, 1.01 * 10 ** -decimals_of(r["value"]),
                 "both printed to the metric's decimals")
        ck.check(tag + ": verdict matches the margin's sign", (r["verdict"] == "pass") == (margin >= 0),
                 "%s %s" % (r["verdict"], r["margin"]))
    for src, rep in reps.items():
        bad = []
        for r in rows:
            if r["file"] != src or r["row_kind"] != "metric":
                continue
            try:
                want = E.get(rep, r["name"])
            except KeyError:
                bad.append((r["name"], "not in JSON"))
                continue
            if want is None:
                if r["value"] != "":
                    bad.append((r["name"], r["value"], None))
            elif abs(float(r["value"]) - want) > 0.5 * 10 ** -decimals_of(r["value"]) + 1e-9:
                bad.append((r["name"], r["value"], want))
        ck.check("%s: csv values = JSON" % os.path.basename(src), not bad, repr(bad[:3]))
    # README's documented header is the library's
    with open(os.path.join(HERE, "..", "..", "io", "report.h"), encoding="utf-8") as f:
        h = f.read()
    m = re.search(r"#define ML_REPORT_CSV_COLUMNS((?:[^\n]*\\\n)*[^\n]*)", h)
    macro = "".join(re.findall(r'"([^"]*)"', m.group(1))) if m else ""
    ck.check("README's CSV header = io/report.h ML_REPORT_CSV_COLUMNS", macro == header, "%r" % macro)


def check_no_negative_zero(ck, exe):
    for demo, _ in DEMOS:
        src = os.path.join(CAPTURES, demo)
        for fmt in ("text", "csv", "json"):
            rc, out, err = E.run(exe, ["--format", fmt, src])
            found = NEG_ZERO.findall(out) if fmt != "json" else json_negative_zeros(out) + NEG_ZERO.findall(out)
            ck.check("%s %s: exit 0, no negative zero" % (demo, fmt), rc == 0 and not found, repr(found[:5]))
        pdf = demo.replace(".wav", ".pdf")
        rc, _, err = E.run(exe, ["--report", pdf, src])
        text = pdf_text(pdf) if os.path.exists(pdf) else None
        found = NEG_ZERO.findall(text) if text is not None else ["no record"]
        ck.check("%s pdf record: no negative zero" % demo, rc == 0 and not found, repr(found[:5]))
    # compare: the differences of a capture with itself are zeros of either sign before rounding
    src = os.path.join(CAPTURES, "receiver-1khz.wav")
    for fmt in ("text", "csv", "json"):
        p = subprocess.run(E.WRAP + [exe, "compare", "--format", fmt, src, src], capture_output=True,
                           timeout=E.RUN_TIMEOUT_S)
        out = p.stdout.decode()
        found = NEG_ZERO.findall(out) + (json_negative_zeros(out) if fmt == "json" and out else [])
        ck.check("compare %s: no negative zero" % fmt, p.returncode == 0 and not found, repr(found[:5]))


def check_pdf_command_line(ck, exe):
    folder = os.path.join(os.getcwd(), *["limits-profiles-" + c * 200 for c in "abcde"])
    os.makedirs(folder)
    limits = os.path.join(folder, "am-broadcast.ini")
    shutil.copy(os.path.join(HERE, "..", "..", "profiles", "am-broadcast-us.ini"), limits)
    src = os.path.join(CAPTURES, "transmitter-iq.wav")
    args = ["--limits", limits, "--report", "record.pdf", "--kind", "iq", src]
    cmdline = " ".join(["modlens", "measure"] + args)
    ck.check("the command line is longer than 1024 characters", len(cmdline) > 1100, "%d" % len(cmdline))
    rc, _, err = E.run(exe, args)
    ck.check("measure --report with the long limits path: exit 0 or 1", rc in (0, 1) and os.path.exists("record.pdf"),
             "rc=%d %s" % (rc, err.strip()))
    if not os.path.exists("record.pdf"):
        return
    squeeze = re.compile(r"\s+")
    for layout in (True, False):
        text = squeeze.sub("", pdf_text("record.pdf", layout))
        ck.check("pdftotext%s holds the whole command line" % (" -layout" if layout else ""),
                 squeeze.sub("", cmdline) in text)
        ck.check("pdftotext%s holds the whole limits path" % (" -layout" if layout else ""),
                 squeeze.sub("", "limits" + limits) in text)
    ck.check("nothing cut with '...'", "..." not in pdf_text("record.pdf", False).split("Metrics")[0])


def check_saved_reasons(ck, exe):
    src = os.path.join(CAPTURES, "receiver-1khz.wav")
    rc, rep, out, err = E.run_json(exe, [src])
    ck.check("fresh report: reasons, qualifiers, bounds present and empty",
             rep is not None and rep.get("reasons") == {} and rep.get("qualifiers") == {} and rep.get("bounds") == {},
             repr(rep and (rep.get("reasons"), rep.get("qualifiers"), rep.get("bounds"))))
    if rep is None:
        return
    rep["hum"]["level_dbc"] = None
    rep["reasons"] = {"hum": {"level_dbc": "capture shorter than 0.4 s"}}
    rep["qualifiers"] = {"audio": {"thd_pct": "noise-limited: upper bound"}}
    rep["bounds"] = {"audio": {"thd_pct": "upper"}}
    rep["settings"] = {"in_force": "calibration 0 dBFS = +18 dBu"}
    with open("a.json", "w") as f:
        json.dump(rep, f)
    p = subprocess.run(E.WRAP + [exe, "compare", "--format", "json", "a.json", src], capture_output=True,
                       timeout=E.RUN_TIMEOUT_S)
    try:
        cmp = json.loads(p.stdout.decode())
    except ValueError:
        cmp = None
    ck.check("compare reads a saved report with reasons, qualifiers and bounds", p.returncode in (0, 1)
             and cmp is not None, p.stderr.decode().strip())
    if cmp:
        row = [m for m in cmp["metrics"] if m["metric"] == "hum.level_dbc"]
        ck.check("the unmeasured figure reads n/a in the comparison", row and row[0]["a"] is None
                 and row[0]["verdict"] == "n/a", repr(row))


def main():
    exe = E.modlens_path()
    ck = E.Checker("test_reports")
    with E.scratch():
        check_concatenated_csv(ck, exe)
        check_no_negative_zero(ck, exe)
        check_pdf_command_line(ck, exe)
        check_saved_reasons(ck, exe)
    ck.finish()


if __name__ == "__main__":
    main()
