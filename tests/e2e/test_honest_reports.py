"""No impossible figure in any report: every command that reports, over captures of every kind.

Usage: /usr/bin/python3 test_honest_reports.py /path/to/modlens /path/to/captures

Runs `measure` (text, JSON and CSV), `compare` (each capture against itself) and `log` (its rows)
on the captures of tests/e2e/honest_signals.py (silence, denormals, DC, 20 Hz and 15 kHz tones,
0.1..1 s captures, 8 kHz 16-bit, noise only, hum only, stereo copies, carriers, a tone in heavy
noise, a dropout, AM as IF and I/Q) and on the demo captures, and checks what every report
promises (README "Reports", dsp/metrics.h "Honest readings"): no figure in dB, dBFS or dBc at
|x| >= 299 (the analysis holds them to +-290, ML_FIGURE_DB_LIMIT), no ENOB outside 0..32 bits,
no NaN or infinity, a figure not measured is null in JSON, empty in CSV and "n/a" in text, each
with a reason, and text, JSON and CSV agree on which figures are bounds.
"""
import csv
import glob
import io
import json
import math
import os
import re
import subprocess
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import e2e_common as E  # noqa: E402
import honest_signals as H  # noqa: E402

DB_LIMIT = 299.0
DB_KEY = re.compile(r"(_db|_dbfs|_dbc|_dbfs_hz|level_db|level_dbfs|level_dbc)$")
DB_UNITS = ("dB", "dBFS", "dBc")


def walk(o, path=""):
    if isinstance(o, dict):
        for k, v in o.items():
            yield from walk(v, path + "." + k if path else k)
    elif isinstance(o, list):
        for i, v in enumerate(o):
            yield from walk(v, "%s[%d]" % (path, i))
    else:
        yield path, o


def bad_numbers_json(rep):
    """Figures of the report out of the reportable range (uncertainties are half-widths: left out)."""
    bad = []
    for path, v in walk(rep):
        if path.startswith("uncertainty") or not isinstance(v, (int, float)) or isinstance(v, bool):
            continue
        leaf = path.split(".")[-1]
        if DB_KEY.search(leaf) and abs(v) >= DB_LIMIT:
            bad.append((path, v))
        if leaf == "enob_bits" and not 0 <= v <= 32:
            bad.append((path, v))
    return bad


def bad_numbers_text(out):
    """Any number printed with a dB unit beside it, or an ENOB row, out of range; and the old
    floor and ceiling values."""
    bad = [m.group(0) for m in re.finditer(r"(-?\d+(?:\.\d+)?)\s*(dBFS|dBc|dB)\b", out)
           if abs(float(m.group(1))) >= DB_LIMIT]
    for line in out.splitlines():
        m = re.match(r"^(\S+)\s+([<>]\s)?(-?\d+(?:\.\d+)?)\s.*?\s(dBFS|dBc|dB|bits)\s", line + " ")
        if m is None:
            continue
        v = float(m.group(3))
        if (m.group(4) == "bits" and not 0 <= v <= 32) or (m.group(4) != "bits" and abs(v) >= DB_LIMIT):
            bad.append(line.strip())
    if re.search(r"(^|\s)-?300\.0+(\s|$)", out, re.M):
        bad.append("a -300 or 300 floor value")
    return bad


def main():
    exe = E.modlens_path()
    captures = os.path.abspath(sys.argv[2])
    ck = E.Checker("test_honest_reports")
    with E.scratch():
        H.write_all()
        files = [n for n, _ in H.CASES] + sorted(glob.glob(os.path.join(captures, "*.wav")))
        for f in files:
            name = os.path.basename(f)
            # measure, JSON
            rc, rep, out, err = E.run_json(exe, [f])
            if not ck.check(name + " measure json: exit 0, valid JSON without NaN",
                            rc == 0 and rep is not None and E.finite_json_text(out), "exit %d %s" % (rc, err.strip())):
                continue
            ck.check(name + " json: every figure in range", not bad_numbers_json(rep), repr(bad_numbers_json(rep)))
            # figures (not table cells, not the input description, checks or intervals) not measured
            nulls = [p for p, v in walk(rep) if v is None and "." in p and "[" not in p
                     and not p.startswith(("uncertainty", "input", "checks"))]
            no_reason = [p for p in nulls if not E.has(rep, "reasons." + p)]
            ck.check(name + " json: every figure not measured has a reason", not no_reason, repr(no_reason))
            bounds = {g + "." + k: v for g, d in rep["bounds"].items() for k, v in d.items()}
            # measure, text
            rc, text, err = E.run(exe, [f])
            ck.check(name + " text: exit 0, every figure in range", rc == 0 and not bad_numbers_text(text),
                     repr(bad_numbers_text(text))[:300])
            na = [p for p in nulls if re.search(r"^%s\s+n/a\b" % re.escape(p), text, re.M) is None]
            ck.check(name + " text: n/a where JSON has null", not na, repr(na))
            tb = [p for p, d in bounds.items()
                  if re.search(r"^%s\s+%s\s" % (re.escape(p), "<" if d == "upper" else ">"), text, re.M) is None]
            ck.check(name + " text: bounds marked < or > as in JSON", not tb, repr(tb))
            # measure, CSV
            rc, out, err = E.run(exe, ["--format", "csv", f])
            rows = E.csv_metrics(out) if rc == 0 else {}
            bad = [(k, r["value"]) for k, r in rows.items() if r["unit"] in DB_UNITS + ("bits",) and r["value"]
                   and (abs(float(r["value"])) >= DB_LIMIT
                        or (r["unit"] == "bits" and not 0 <= float(r["value"]) <= 32))]
            bad += [(k, "no reason") for k, r in rows.items() if r["value"] == "" and not r["reason"]]
            bad += [(k, r["bound"]) for k, r in rows.items() if r["bound"] != bounds.get(k, "")]
            ck.check(name + " csv: figures in range, empty with a reason, bounds as JSON", rc == 0 and rows
                     and not bad, repr(bad)[:300])
            # compare: the capture against itself
            p = subprocess.run(E.WRAP + [exe, "compare", "--format", "json", f, f], capture_output=True, text=True,
                               timeout=E.RUN_TIMEOUT_S)
            try:
                cmp = json.loads(p.stdout)
            except ValueError:
                cmp = None
            bad = [] if cmp is None else [
                (m["metric"], m[s]) for m in cmp["metrics"] for s in ("a", "b")
                if m["unit"] in DB_UNITS and m[s] is not None and abs(m[s]) >= DB_LIMIT]
            ck.check(name + " compare with itself: exit 0, nothing worse, figures in range",
                     p.returncode == 0 and cmp is not None and not bad
                     and all(m["verdict"] in ("same", "n/a") for m in cmp["metrics"]),
                     "exit %d %s %r" % (p.returncode, p.stderr.strip(), bad))
            # log rows (files only)
            p = subprocess.run(E.WRAP + [exe, "log", "--out", "rows.csv", f], capture_output=True, text=True,
                               timeout=E.RUN_TIMEOUT_S)
            bad = []
            if os.path.exists("rows.csv"):
                with open("rows.csv", newline="") as fh:
                    for r in csv.DictReader(fh):
                        for k, v in r.items():
                            if k and DB_KEY.search(k) and v not in ("", None):
                                x = float(v.lstrip("<>"))
                                if not math.isfinite(x) or abs(x) >= DB_LIMIT:
                                    bad.append((k, v))
                os.remove("rows.csv")
            for extra in glob.glob("rows-events.csv"):
                os.remove(extra)
            ck.check(name + " log rows: figures in range", p.returncode == 0 and not bad,
                     "exit %d %s %r" % (p.returncode, p.stderr.strip()[-200:], bad[:5]))
    ck.finish()


if __name__ == "__main__":
    main()
