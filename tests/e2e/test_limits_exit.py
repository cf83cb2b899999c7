"""End-to-end test of limits profiles (--limits) and the exit status of `modlens measure`.

Usage: /usr/bin/python3 test_limits_exit.py /path/to/modlens

The profile syntax is the one documented at the top of analyzer/limits.h: "key = value" lines,
';' / '#' comments, optional [section] headers; keys are <metric>_min / <metric>_max by dotted
name, by unique short name, or by short name inside a [group] section; [profile] holds name and
description. Exit status (measure --help): 0 all checks pass, 1 a check fails, 2 usage or input
error -- a profile error is one stderr line naming the file, the line number and the key.

Measured signal: 1 kHz at -6.0206 dBFS with a 2nd harmonic at -40 dBc (THD = 1 %), 60 Hz hum
at -60 dBFS, white noise rms 1e-4; 3 s at 48 kHz, 24-bit.
"""
import json
import os
import subprocess
import re
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402

import e2e_common as E  # noqa: E402

# Expected values (analytic): THD = a2/a1 = 1 % (the measured value is within 0.01 % of it, see
# test_cli_formats); fundamental -6.02 dBFS; hum -60 dBFS = -53.98 dBc; no clipping. The limits
# below sit at least 0.3 % / 1 dB away from these, so noise cannot flip a check.
PASSING = """\
; a passing profile that uses every spelling
[profile]
name = e2e passing profile
description = short names, dotted names and groups
[limits]
thd_pct_max = 1.5
audio.fundamental_dbfs_min = -7
audio.fundamental_dbfs_max = -5
[audio]
thd_db_max = -35
snr_db_min = 40
# clipped_samples is exactly 0: a limit equal to the value passes (margin >= 0)
clipped_samples_max = 0
[hum]
level_dbc_max = -45
mains_hz_min = 60
mains_hz_max = 60
"""

TOPLEVEL = """\
# keys before any section header
thd_pct_max = 2
hum.level_dbfs_max = -50
"""


def write(name, text):
    with open(name, "w") as f:
        f.write(text)
    return name


def one_line(err):
    lines = err.splitlines()
    return len(lines) == 1, lines[0] if lines else ""


def check_pass_fail(ck, exe, wav):
    write("pass.ini", PASSING)
    rc, rep, out, err = E.run_json(exe, ["--limits", "pass.ini", wav])
    ck.check("passing profile: exit 0", rc == 0, "exit %d %s" % (rc, err.strip()))
    if rep is not None:
        names = [c["metric"] for c in rep["checks"]]
        want = ["audio.thd_pct", "audio.fundamental_dbfs", "audio.thd_db", "audio.snr_db",
                "audio.clipped_samples", "hum.level_dbc", "hum.mains_hz"]
        ck.check("passing profile: one check per limited metric, dotted names", sorted(names) == sorted(want),
                 repr(names))
        ck.check("passing profile: every check passes", all(c["pass"] is True for c in rep["checks"]))
        ck.check("passing profile: verdict pass", rep["verdict"] == "pass", repr(rep["verdict"]))
        fd = [c for c in rep["checks"] if c["metric"] == "audio.fundamental_dbfs"]
        ck.check("min and max of one metric form one check", len(fd) == 1 and fd[0]["min"] == -7
                 and fd[0]["max"] == -5, repr(fd))
        cl = [c for c in rep["checks"] if c["metric"] == "audio.clipped_samples"]
        ck.check("value equal to the limit passes", len(cl) == 1 and cl[0]["value"] == 0 and cl[0]["pass"] is True,
                 repr(cl))
        for c in rep["checks"]:
            v = E.get(rep, c["metric"])
            if c["value"] != v:
                ck.check("check value = report value for " + c["metric"], False, "%r vs %r" % (c["value"], v))
    rc, out, err = E.run(exe, ["--limits", "pass.ini", wav])
    ck.check("passing profile text: exit 0, verdict PASS (7 of 7)", rc == 0
             and re.search(r"^verdict: PASS \(7 of 7 checks passed\)", out, re.M) is not None, out[-200:])
    ck.check("passing profile text: no FAIL row", re.search(r"\bFAIL\b", out) is None)

    write("top.ini", TOPLEVEL)
    rc, rep, out, err = E.run_json(exe, ["--limits", "top.ini", wav])
    ck.check("keys outside any section: exit 0, 2 checks", rc == 0 and rep is not None and
             [c["metric"] for c in rep["checks"]] == ["audio.thd_pct", "hum.level_dbfs"],
             "exit %d %r" % (rc, rep and rep["checks"]))

    # Indented "key = value" lines are still key = value lines (limits.h); two in a row must
    # not be read as one key continued over two lines.
    write("indent.ini", "[audio]\n  thd_pct_max = 2\n  snr_db_min = 40\n[hum]\n\tlevel_dbc_max = -45\n")
    rc, rep, out, err = E.run_json(exe, ["--limits", "indent.ini", wav])
    ck.check("indented keys: exit 0, 3 checks", rc == 0 and rep is not None and
             [c["metric"] for c in rep["checks"]] == ["audio.thd_pct", "audio.snr_db", "hum.level_dbc"],
             "exit %d %s %r" % (rc, err.strip(), rep and rep["checks"]))

    # failing: THD is 1 %, so thd_pct_max = 0.5 fails and thd_pct_min = 0.5 passes
    write("fail.ini", "[audio]\nthd_pct_max = 0.5\nfundamental_dbfs_min = -7\n")
    rc, rep, out, err = E.run_json(exe, ["--limits", "fail.ini", wav])
    ck.check("failing profile: exit 1", rc == 1, "exit %d %s" % (rc, err.strip()))
    ck.check("failing profile: nothing on stderr", err == "", repr(err))
    if rep is not None:
        c = {x["metric"]: x for x in rep["checks"]}
        thd = c.get("audio.thd_pct", {})
        ck.check("failing check: pass false, value ~1 %, max 0.5", thd.get("pass") is False
                 and abs(thd.get("value", 0) - 1.0) < 0.01 and thd.get("max") == 0.5, repr(thd))
        # margin: distance to the nearest limit, negative outside (io/report.h)
        ck.close("failing check: margin = max - value", thd.get("margin"), 0.5 - thd.get("value", 0), 1e-6,
                 "io/report.h")
        ck.check("other check still passes", c.get("audio.fundamental_dbfs", {}).get("pass") is True)
        ck.check("failing profile: verdict fail", rep["verdict"] == "fail", repr(rep["verdict"]))
    rc, out, err = E.run(exe, ["--limits", "fail.ini", wav])
    ck.check("failing profile text: exit 1, FAIL row for thd_pct",
             rc == 1 and re.search(r"^audio\.thd_pct\s.*<= 0\.5000\s+FAIL\b", out, re.M) is not None,
             "exit %d" % rc)
    ck.check("failing profile text: verdict FAIL (1 of 2)",
             re.search(r"^verdict: FAIL \(1 of 2 checks passed\)", out, re.M) is not None)
    rc, out, err = E.run(exe, ["--format", "csv", "--limits", "fail.ini", wav])
    row = E.csv_metrics(out).get("audio.thd_pct", {})
    ck.check("failing profile csv: exit 1, fail row with its upper limit",
             rc == 1 and row.get("upper_limit") == "0.5" and row.get("verdict") == "fail", repr(row))
    # --output: the report is still written when a check fails
    rc, out, err = E.run(exe, ["--format", "json", "--limits", "fail.ini", "--output", "fail.json", wav])
    ck.check("failing profile --output: exit 1, file written, stdout empty",
             rc == 1 and out == "" and os.path.exists("fail.json") and '"fail"' in open("fail.json").read())

    # a limited metric that cannot be measured (silent input) is a failed check, not an error
    E.write("silent.wav", np.zeros(48000 * 2), 48000, "PCM_16")
    write("snr.ini", "snr_db_min = 40\n")
    rc, rep, out, err = E.run_json(exe, ["--limits", "snr.ini", "silent.wav"])
    ck.check("unmeasurable metric: exit 1, check failed with null value",
             rc == 1 and rep is not None and rep["checks"] and rep["checks"][0]["pass"] is False
             and rep["checks"][0]["value"] is None and rep["verdict"] == "fail",
             "exit %d %r" % (rc, rep and rep["checks"]))


# (name, profile text, line number expected in the message or None, key or fragment expected)
ERRORS = [
    ("unknown key in [profile]", "[profile]\nname = x\nauthor = me\nthd_pct_max = 2\n", 3, "author"),
    ("key without _min/_max", "thd_pct_max = 2\nthd_pct = 3\n", 2, "thd_pct"),
    ("unknown metric", "; comment\nthd_pct_max = 2\nwow_flutter_max = 3\n", 3, "wow_flutter_max"),
    ("unknown metric in a group", "[hum]\nthd_pct_max = 2\n", 2, "thd_pct_max"),
    ("unknown group", "[video]\nlevel_dbc_max = 2\n", 2, "level_dbc_max"),
    ("non-numeric value", "thd_pct_max = abc\n", 1, "thd_pct_max"),
    ("value with a unit", "\nsnr_db_min = 60 dB\n", 2, "snr_db_min"),
    ("empty value", "thd_pct_max =\n", 1, "thd_pct_max"),
    ("infinite value", "thd_pct_max = inf\n", 1, "thd_pct_max"),
    ("NaN value", "thd_pct_max = nan\n", 1, "thd_pct_max"),
    ("overflowing value", "thd_pct_max = 1e999\n", 1, "thd_pct_max"),
    ("repeated key", "thd_pct_max = 2\nsnr_db_min = 40\nthd_pct_max = 3\n", 3, "thd_pct_max"),
    ("same limit by short and dotted name", "thd_pct_max = 2\naudio.thd_pct_max = 3\n", 2, "thd_pct_max"),
    ("same limit in a group and at top", "thd_pct_max = 2\n[audio]\nthd_pct_max = 3\n", 3, "thd_pct_max"),
    ("min > max", "[audio]\nthd_pct_min = 5\nthd_pct_max = 1\n", 3, "thd_pct"),
    ("line without '='", "thd_pct_max = 2\nsnr_db_min 40\n", 2, "snr_db_min"),
    ("empty profile", "", None, None),
    ("comments only", "; nothing\n# here\n", None, None),
    ("no limits, only [profile]", "[profile]\nname = empty\n", None, None),
]


def check_errors(ck, exe, wav):
    for i, (what, text, line, key) in enumerate(ERRORS):
        path = write("bad%02d.ini" % i, text)
        rc, out, err = E.run(exe, ["--format", "json", "--limits", path, "--output", "r%02d.json" % i, wav])
        single, msg = one_line(err)
        ok = rc == 2 and single and path in msg and out == "" and not os.path.exists("r%02d.json" % i)
        if line is not None:
            ok = ok and re.search(r"\bline %d\b" % line, msg) is not None
        if key is not None:
            ok = ok and key in msg
        ck.check("profile error, %s: exit 2, one stderr line naming file%s%s" % (
            what, ", line %d" % line if line else "", ", key '%s'" % key if key else ""), ok,
            "exit %d stderr %r" % (rc, err))
    rc, out, err = E.run(exe, ["--limits", "no-such-profile.ini", wav])
    single, msg = one_line(err)
    ck.check("missing profile: exit 2, one stderr line naming it", rc == 2 and single and out == ""
             and "no-such-profile.ini" in msg and re.search(r"no such file", msg, re.I) is not None,
             "exit %d %r" % (rc, err))
    os.mkdir("dir.ini")
    rc, out, err = E.run(exe, ["--limits", "dir.ini", wav])
    single, msg = one_line(err)
    ck.check("directory as profile: exit 2, one stderr line naming it", rc == 2 and single and out == ""
             and "dir.ini" in msg, "exit %d %r" % (rc, err))


def check_bundled(ck, exe, wav):
    here = os.path.dirname(os.path.abspath(__file__))
    pdir = os.path.normpath(os.path.join(here, "..", "..", "profiles"))
    profiles = sorted(f for f in os.listdir(pdir) if f.endswith(".ini")) if os.path.isdir(pdir) else []
    if not profiles:
        print("SKIP bundled profiles: none in %s" % pdir)
        return
    for p in profiles:
        path = os.path.join(pdir, p)
        nkeys, sections = 0, set()
        with open(path) as f:
            section = ""
            for raw in f:
                s = raw.strip()
                if s.startswith("["):
                    section = s.strip("[]").strip()
                elif s and s[0] not in ";#" and "=" in s and section != "profile":
                    nkeys += 1
                    sections.add(section)
        if sections == {"response"}:
            # a sweep's profile: checked on a stepped recording, one check per point and figure
            plan = subprocess.run([exe, "tone", "--freqs", "proof", "--step-seconds", "0.6", "--out", "plan.wav",
                                   "--force"], capture_output=True, text=True, timeout=60)
            q = subprocess.run(E.WRAP + [exe, "sweep", "--format", "json", "--limits", path, "plan.wav"],
                               capture_output=True, text=True, timeout=E.RUN_TIMEOUT_S)
            rep = json.loads(q.stdout) if q.returncode in (0, 1) and plan.returncode == 0 else None
            ck.check("bundled profile %s: a sweep's points checked, verdict matches exit" % p, rep is not None
                     and len(rep["checks"]) > 0 and rep["verdict"] == ("pass" if q.returncode == 0 else "fail"),
                     "exit %d %s" % (q.returncode, q.stderr.strip()))
            continue
        rc, rep, out, err = E.run_json(exe, ["--limits", path, wav])
        ck.check("bundled profile %s loads and runs (exit 0 or 1)" % p, rc in (0, 1) and rep is not None,
                 "exit %d %s" % (rc, err.strip()))
        if rep is not None:
            ck.check("bundled profile %s: checks present, verdict matches exit" % p,
                     0 < len(rep["checks"]) <= nkeys and rep["verdict"] == ("pass" if rc == 0 else "fail"),
                     "%d checks for %d keys, verdict %r" % (len(rep["checks"]), nkeys, rep["verdict"]))


def main():
    exe = E.modlens_path()
    ck = E.Checker("test_limits_exit")
    with E.scratch():
        x = E.synth(48000, 3.0, [(1000.0, 0.5, 0.0), (2000.0, 0.005, 0.5), (60.0, 0.001, 0.2)],
                    noise_rms=1e-4, seed=11)
        wav = E.write("tone.wav", x, 48000, "PCM_24")
        rc, rep, out, err = E.run_json(exe, [wav])
        ck.check("no limits: exit 0, verdict unchecked", rc == 0 and rep is not None and rep["verdict"] == "unchecked")
        if rep is not None:  # the premises of the profiles above
            ck.close("premise: THD 1 %", rep["audio"]["thd_pct"], 1.0, 0.01, "a2/a1; limits sit >= 0.3 % away")
            ck.close("premise: hum -53.98 dBc", rep["hum"]["level_dbc"], -53.98, 0.1, "limits sit >= 8 dB away")
        check_pass_fail(ck, exe, wav)
        check_errors(ck, exe, wav)
        check_bundled(ck, exe, wav)
    ck.finish()


if __name__ == "__main__":
    main()
