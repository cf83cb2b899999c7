"""Shared helpers of the modlens end-to-end tests (run with Debian's /usr/bin/python3).

Each test script imports this module, generates its inputs with numpy + soundfile into a
temporary directory (fixed seeds), runs the modlens executable given as argv[1] and prints one
line per check. The script exits 0 when every check passed, 1 otherwise.
"""
import json
import math
import os
import subprocess
import sys
import tempfile

import numpy as np
import soundfile as sf

# Every modlens run is a few tens of milliseconds; a hang is a failure, not a reason to wait.
# MODLENS_WRAP (for example "valgrind --error-exitcode=99") goes in front of every modlens
# command; such a checker is slow, so it gets ten times longer.
WRAP = os.environ.get("MODLENS_WRAP", "").split()
RUN_TIMEOUT_S = 600 if WRAP else 60

# modlens reads a settings file from the user's configuration folder (XDG_CONFIG_HOME, else
# ~/.config): every command these tests run (this process's children, and those of the live
# tests' helpers, which inherit this environment) sees an empty configuration folder of its own
# instead, so that a developer's own settings cannot change a result. Tests of the settings
# file set XDG_CONFIG_HOME themselves.
_NO_SETTINGS = tempfile.TemporaryDirectory(prefix="modlens-xdg-")
os.chmod(_NO_SETTINGS.name, 0o755)  # cases run as another user must see that it is empty
os.environ["XDG_CONFIG_HOME"] = _NO_SETTINGS.name


class Checker:
    """Counts checks, prints one line each, and turns failures into the exit status."""

    def __init__(self, title):
        self.title = title
        self.failed = []
        self.count = 0

    def check(self, name, ok, detail=""):
        self.count += 1
        line = "%s %s" % ("PASS" if ok else "FAIL", name)
        if detail:
            line += ": " + detail
        print(line, flush=True)
        if not ok:
            self.failed.append(name)
        return ok

    def close(self, name, got, want, tol, reason=""):
        """|got - want| <= tol; got may be None (a null in the report), which fails."""
        ok = got is not None and isinstance(got, (int, float)) and math.isfinite(got) \
            and abs(got - want) <= tol
        detail = "got %r, want %.9g +- %.3g" % (got, want, tol)
        if reason:
            detail += " (" + reason + ")"
        return self.check(name, ok, detail)

    def rel(self, name, got, want, rtol, reason=""):
        """|got / want - 1| <= rtol."""
        return self.close(name, got, want, abs(want) * rtol, reason)

    def finish(self):
        print("%s: %d checks, %d failed%s" % (self.title, self.count, len(self.failed),
                                             (": " + ", ".join(self.failed)) if self.failed else ""))
        sys.exit(1 if self.failed else 0)


def modlens_path():
    if len(sys.argv) < 2:
        sys.exit("usage: %s /path/to/modlens" % sys.argv[0])
    p = os.path.abspath(sys.argv[1])
    if not os.access(p, os.X_OK):
        sys.exit("%s: not an executable" % p)
    return p


def scratch():
    """A temporary directory (removed by the caller's `with`) that is also the working dir."""
    d = tempfile.TemporaryDirectory(prefix="modlens-e2e-")
    os.chdir(d.name)
    return d


def run(exe, args):
    """Runs `exe measure args...`; returns (exit status, stdout text, stderr text)."""
    p = subprocess.run(WRAP + [exe, "measure"] + [str(a) for a in args], capture_output=True,
                       timeout=RUN_TIMEOUT_S)
    return p.returncode, p.stdout.decode("utf-8", "replace"), p.stderr.decode("utf-8", "replace")


def run_cmd(exe, args, env=None):
    """Runs `exe args...` (any command); returns (exit status, stdout text, stderr text)."""
    p = subprocess.run(WRAP + [exe] + [str(a) for a in args], capture_output=True, timeout=RUN_TIMEOUT_S,
                       env=env)
    return p.returncode, p.stdout.decode("utf-8", "replace"), p.stderr.decode("utf-8", "replace")


def a_weighting_db(f):
    """IEC 61672-1:2013 Annex E eq. E.6 with the pole frequencies of E.4 (docs/references.md 1.1),
    normalised exactly to 0 dB at 1 kHz (numpy arrays or numbers)."""
    f1, f2, f3, f4 = 20.598997057618316, 107.65264864304629, 737.8622307362901, 12194.217147998012

    def raw(x):
        x2 = np.asarray(x, dtype=float) ** 2
        return 20 * np.log10(f4 * f4 * x2 * x2 / ((x2 + f1 * f1) * np.sqrt(x2 + f2 * f2) * np.sqrt(x2 + f3 * f3)
                                                  * (x2 + f4 * f4)))
    return raw(f) - raw(1000.0)


def w468_db(f):
    """ITU-R BS.468-4 weighting from the closed form of docs/references.md 2.2 (h1, h2, R), normalised
    exactly to 0 dB at 1 kHz as Table 1 prints it."""
    def raw(x):
        x = np.asarray(x, dtype=float)
        h1 = -4.737338981378384e-24 * x ** 6 + 2.043828333606125e-15 * x ** 4 - 1.363894795463638e-7 * x ** 2 + 1
        h2 = 1.306612257412824e-19 * x ** 5 - 2.118150887518656e-11 * x ** 3 + 5.559488023498642e-4 * x
        return 20 * np.log10(1.246332637532143e-4 * x / np.sqrt(h1 * h1 + h2 * h2))
    return raw(f) - raw(1000.0)


def run_json(exe, args):
    """Runs with --format json; returns (status, parsed report or None, stdout, stderr)."""
    rc, out, err = run(exe, ["--format", "json"] + list(args))
    try:
        rep = json.loads(out)
    except ValueError:
        rep = None
    return rc, rep, out, err


def get(rep, dotted):
    """rep["a"]["b"] for "a.b"; KeyError when a component is missing."""
    v = rep
    for part in dotted.split("."):
        v = v[part]
    return v


def has(rep, dotted):
    try:
        get(rep, dotted)
        return True
    except (KeyError, TypeError):
        return False


def dbfs(amplitude):
    """Level of a sine of this peak amplitude: a full-scale sine (power 0.5) is 0 dBFS."""
    return 20.0 * math.log10(amplitude)


def synth(fs, seconds, parts, noise_rms=0.0, dc=0.0, seed=1):
    """Sum of sines [(freq_hz, amplitude, phase_rad), ...] + DC + white Gaussian noise."""
    n = int(round(fs * seconds))
    t = np.arange(n) / fs
    x = np.full(n, float(dc))
    for f, a, ph in parts:
        x += a * np.sin(2.0 * np.pi * f * t + ph)
    if noise_rms > 0:
        x += np.random.default_rng(seed).normal(0.0, noise_rms, n)
    return x


def write(path, x, fs, subtype, fmt=None):
    sf.write(path, x, fs, subtype=subtype, format=fmt)
    return path


def quantisation_var(subtype):
    """Variance of rounding to the stored resolution (uniform error, LSB^2/12) for full scale
    +-1 (LSB = 2^(1-bits)); float files are taken as exact at the levels used here."""
    bits = {"PCM_16": 16, "PCM_24": 24, "PCM_32": 32}.get(subtype)
    if bits is None:
        return 0.0
    lsb = 2.0 ** (1 - bits)
    return lsb * lsb / 12.0


def finite_json_text(text):
    """True when the JSON text has no NaN/Infinity tokens (which are not JSON)."""
    bad = []

    def reject(tok):
        bad.append(tok)
        return None

    try:
        json.loads(text, parse_constant=reject)
    except ValueError:
        return False
    return not bad


def csv_columns():
    """The CSV report's columns as README.md documents them (the header line that starts with
    "file,input_kind,"): the report itself has no header row (io/report.h)."""
    readme = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "README.md")
    with open(readme, encoding="utf-8") as f:
        for line in f:
            if line.strip().startswith("file,input_kind,"):
                return line.strip().split(",")
    raise RuntimeError("README.md documents no CSV header line")


def csv_rows(text):
    """The rows of a CSV report as dicts keyed by the documented columns; a row whose field count
    differs from the columns raises ValueError."""
    import csv
    import io
    cols = csv_columns()
    rows = []
    for r in csv.reader(io.StringIO(text)):
        if len(r) != len(cols):
            raise ValueError("row of %d fields, %d columns: %r" % (len(r), len(cols), r))
        rows.append(dict(zip(cols, r)))
    return rows


def csv_metrics(text):
    """{name: row} of the metric rows of a CSV report."""
    return {r["name"]: r for r in csv_rows(text) if r["row_kind"] == "metric"}


def log_lines(path):
    """The CSV lines of a log's rows or events file as lists of fields (RFC 4180), header first,
    without the '#' line at its top that says what is logged."""
    import csv
    with open(path, newline="") as f:
        return [r for r in csv.reader(line for line in f if not line.startswith("#"))]


def log_dicts(path):
    """The rows (or events) of a log file as dicts keyed by its header."""
    lines = log_lines(path)
    return [dict(zip(lines[0], r)) for r in lines[1:]] if lines else []


def log_meta(path):
    """The first line of a log's file (what is logged), without its newline."""
    with open(path) as f:
        return f.readline().rstrip("\n")


def fit_powers(x, fs, freqs):
    """Least-squares powers A_k^2 / 2 of sines at known frequencies (with DC), fitted together
    (docs/references.md 4: the IEEE 1057 3-parameter fit, for several frequencies at once)."""
    t = np.arange(len(x)) / fs
    cols = [np.ones_like(t)]
    for f in freqs:
        cols += [np.cos(2 * np.pi * f * t), np.sin(2 * np.pi * f * t)]
    c, *_ = np.linalg.lstsq(np.stack(cols, axis=1), np.asarray(x, dtype=np.float64), rcond=None)
    return [(c[1 + 2 * i] ** 2 + c[2 + 2 * i] ** 2) / 2 for i in range(len(freqs))]
