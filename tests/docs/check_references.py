"""Recomputes every value docs/references.md tags "computed" and checks the file prints it.

Run with Debian's /usr/bin/python3 (numpy, scipy): check_references.py path/to/docs/references.md.
A value passes when the number printed in the file (read from the file, not copied here) equals
the recomputed one to the printed precision: |printed - computed| <= half a unit of its last digit
(plus 1e-9). Tables are read by section and first cell; loose figures by a regular expression on
the row that holds them. Prints one line per check; exits 1 when one fails.
"""
import math
import re
import sys

import numpy as np
import scipy.signal as ss

lg = np.log10
failed = []
count = 0


def report(name, ok, detail):
    global count
    count += 1
    print("%s %s: %s" % ("PASS" if ok else "FAIL", name, detail), flush=True)
    if not ok:
        failed.append(name)


def number(text):
    """The float of a printed number ("-13.26", "+0.592", "**-70.83**", "0"); its decimals."""
    t = text.strip().strip("*").replace("+-", "").replace("+", "").strip()
    m = re.fullmatch(r"-?\d+(\.\d+)?(e-?\d+)?", t)
    if m is None:
        raise ValueError("not a number: %r" % text)
    dec = len(m.group(1)) - 1 if m.group(1) and not m.group(2) else 0
    if m.group(2):  # 1.2345e-5: decimals of the mantissa, scaled
        dec = len(m.group(1) or ".") - 1 - int(m.group(2)[1:])
    return float(t), dec


def printed(name, text, value):
    """The printed text equals value to its printed precision."""
    try:
        p, dec = number(text)
    except ValueError as e:
        report(name, False, str(e))
        return
    tol = 0.5 * 10.0 ** (-dec) + 1e-9
    report(name, abs(p - value) <= tol, "printed %s, computed %.6f" % (text.strip(), value))


class Doc:
    def __init__(self, path):
        with open(path, encoding="utf-8") as f:
            self.text = f.read()
        self.lines = self.text.splitlines()

    def section(self, heading):
        """Lines from the heading that starts with `heading` to the next heading of any level."""
        start = None
        for i, l in enumerate(self.lines):
            if start is None and l.startswith("#") and l.lstrip("#").strip().startswith(heading):
                start = i + 1
            elif start is not None and l.startswith("#"):
                return self.lines[start:i]
        if start is None:
            raise KeyError("no section " + heading)
        return self.lines[start:]

    def table(self, heading):
        """Rows of the first table of a section as lists of cells, header and rule dropped."""
        rows = []
        for l in self.section(heading):
            if l.startswith("|"):
                cells = [c.strip() for c in l.strip().strip("|").split("|")]
                rows.append(cells)
            elif rows:
                break
        return rows[2:]

    def row(self, heading, first):
        """The row of a section's table whose first cell starts with `first`."""
        for r in self.table(heading):
            if r[0].startswith(first):
                return r
        raise KeyError("%s: no row %r" % (heading, first))

    def find(self, heading, pattern):
        """The groups of the first match of pattern in a section's text."""
        m = re.search(pattern, "\n".join(self.section(heading)))
        if m is None:
            raise KeyError("%s: no match for %r" % (heading, pattern))
        return m.groups()


# ---- 1: IEC 61672-1 closed forms ------------------------------------------------------------
FR, FL, FH, D, FA = 1000.0, 10 ** 1.5, 10 ** 3.9, math.sqrt(0.5), 10 ** 2.45
C_ = FL ** 2 * FH ** 2
B_ = (FR ** 2 + FL ** 2 * FH ** 2 / FR ** 2 - D * (FL ** 2 + FH ** 2)) / (1 - D)
F1 = math.sqrt((-B_ - math.sqrt(B_ * B_ - 4 * C_)) / 2)
F4 = math.sqrt((-B_ + math.sqrt(B_ * B_ - 4 * C_)) / 2)
F2 = FA * (3 - math.sqrt(5)) / 2
F3 = FA * (3 + math.sqrt(5)) / 2


def a_raw(f):
    f = np.asarray(f, float)
    return 20 * lg(F4 ** 2 * f ** 4 / ((f ** 2 + F1 ** 2) * np.sqrt(f ** 2 + F2 ** 2) * np.sqrt(f ** 2 + F3 ** 2)
                                      * (f ** 2 + F4 ** 2)))


def c_raw(f):
    f = np.asarray(f, float)
    return 20 * lg(F4 ** 2 * f ** 2 / ((f ** 2 + F1 ** 2) * (f ** 2 + F4 ** 2)))


A1000, C1000 = float(a_raw(1000.0)), float(c_raw(1000.0))


def r468(f):
    """ITU-R 468 closed form of docs/references.md 2.2 (offset 18.2 dB)."""
    f = np.asarray(f, float)
    h1 = -4.737338981378384e-24 * f ** 6 + 2.043828333606125e-15 * f ** 4 - 1.363894795463638e-7 * f ** 2 + 1
    h2 = 1.306612257412824e-19 * f ** 5 - 2.118150887518656e-11 * f ** 3 + 5.559488023498642e-4 * f
    return 18.2 + 20 * lg(1.246332637532143e-4 * f / np.sqrt(h1 ** 2 + h2 ** 2))


def check_1(doc):
    for name, v in (("f1", F1), ("f2", F2), ("f3", F3), ("f4", F4)):
        printed("1.1 " + name, doc.row("1.1", name)[1].split()[0], v)
    printed("1.1 A1000 exact", doc.find("1.1", r"exact value from the constants is (-[\d.]+) dB")[0], A1000)
    printed("1.1 C1000 exact", doc.find("1.1", r"C1000 \| -0.062 dB as printed; exact (-[\d.]+) dB")[0], C1000)
    dev_exact = 0.0
    for r in doc.table("1.2"):
        nominal = float(r[0])
        n = round(10 * lg(nominal / 1000.0)) + 30
        exact = 1000 * 10 ** ((n - 30) / 10)
        printed("1.2 %s Hz exact f" % r[0], r[1], exact)
        printed("1.2 %s Hz A formula at exact f" % r[0], r[5], float(a_raw(exact)) + 2.0)
        printed("1.2 %s Hz C formula at exact f" % r[0], r[6], float(c_raw(exact)) + 0.062)
        printed("1.2 %s Hz A formula at nominal f" % r[0], r[7], float(a_raw(nominal)) + 2.0)
        dev_exact = max(dev_exact, abs(float(a_raw(exact)) - A1000 - number(r[2])[0]),
                        abs(float(c_raw(exact)) - C1000 - number(r[3])[0]))
    printed("1.2 largest deviation, exact normalisation",
            doc.find("1.2", r"within (\d\.\d+) dB of\s+Table 3")[0], dev_exact)
    printed("1.2 160 Hz with A1000 = -2.000", doc.find("1.2", r"the 160 Hz row gives\s+(-[\d.]+) dB")[0],
            float(a_raw(1000 * 10 ** (-0.8))) + 2.0)
    for r in doc.table("1.3"):
        if r[0].startswith("white"):
            ff = np.linspace(20.0, 20000.0, 2000001)

            def band(w_db):
                return 10 * lg(np.trapz(10 ** (w_db / 10), ff) / (ff[-1] - ff[0]))
            printed("1.3 white noise A", r[1].split()[0], band(a_raw(ff) - A1000))
            printed("1.3 white noise A, printed constants", r[1].split()[0], band(a_raw(ff) + 2.0))
            printed("1.3 white noise C", r[2].split()[0], band(c_raw(ff) - C1000))
            printed("1.3 white noise 468", r[3].split()[0], band(r468(ff)))
            continue
        f = float(r[0])
        printed("1.3 %s Hz A" % r[0], r[1], float(a_raw(f)) + 2.0)
        printed("1.3 %s Hz C" % r[0], r[2], float(c_raw(f)) + 0.062)
        printed("1.3 %s Hz 468" % r[0], r[3], float(r468(f)))


# ---- 2: ITU-R BS.468-4 ------------------------------------------------------------------------
P468 = [-25903.70104781628, -23615.53521363528 + 36379.90893732929j, -23615.53521363528 - 36379.90893732929j,
        -18743.74669072136 + 62460.15645250649j, -18743.74669072136 - 62460.15645250649j, -62675.1700584679]


def check_2(doc):
    rows = doc.table("2.1")
    f = np.array([float(r[0]) for r in rows])
    w, h = ss.freqs_zpk([0], P468, 1.0, worN=2 * np.pi * np.append(f, 6300.0))
    proto = 20 * lg(np.abs(h))
    proto = proto[:-1] - proto[-1] + 12.2
    worst = (0.0, 0.0)
    for r, p in zip(rows, proto):
        fr = float(r[0])
        printed("2.1 %s Hz closed form" % r[0], r[3], float(r468(fr)))
        printed("2.1 %s Hz closed form - table" % r[0], r[4], float(r468(fr)) - number(r[1])[0])
        tol = r[2].split()[0]
        tol = 0.0 if tol == "0" else number(tol.split("/")[0])[0]
        dev = p - number(r[1])[0]
        report("2.2 prototype within Table 1 tolerance at %s Hz" % r[0], abs(dev) <= tol + 1e-6,
               "deviation %.3f dB, tolerance %.2f" % (dev, tol))
        if abs(dev) > abs(worst[1]):
            worst = (fr, dev)
        if fr == 1000.0:
            printed("2.2 prototype at 1 kHz", doc.find("2.2", r"with that gain 1 kHz reads (-[\d.]+) dB")[0], p)
    got = doc.find("2.2", r"the largest deviation is (-[\d.]+) dB at (\d+) Hz")
    printed("2.2 prototype largest deviation", got[0], worst[1])
    report("2.2 prototype largest deviation frequency", float(got[1]) == worst[0], "%s Hz" % got[1])
    g = np.linspace(5000.0, 8000.0, 300001)
    v = r468(g)
    got = doc.find("2.2", r"maximum \+([\d.]+) dB at (\d+) Hz")
    printed("2.2 closed form maximum", got[0], float(v.max()))
    printed("2.2 closed form maximum frequency", got[1], float(g[np.argmax(v)]))
    printed("2.2 closed form at 1 kHz", doc.find("2.2", r"468\(1 kHz\) = (-[\d.]+) dB")[0], float(r468(1000.0)))
    alt = 18.246265068039158 - 18.2
    got = doc.find("2.2", r"1 kHz \(\+([\d.]+) dB\) and 12.5 kHz \((-[\d.]+) dB\)")
    printed("2.2 other offset at 1 kHz", got[0], float(r468(1000.0)) + alt)
    printed("2.2 other offset at 12.5 kHz", got[1], float(r468(12500.0)) + alt)
    got = doc.find("2.2", r"e\.g\. 63 Hz (-[\d.]+), 3150 Hz \+([\d.]+), 8 kHz \+([\d.]+), 12.5 kHz (-[\d.]+) dB")
    for text, fr in zip(got, (63, 3150, 8000, 12500)):
        table = number(doc.row("2.1", str(fr))[1])[0]
        printed("2.2 CCIR-RMS at %d Hz" % fr, text, table - 5.63)


# ---- 3: windows ---------------------------------------------------------------------------------
N_WIN, PAD = 4096, 64


def cosine_window(a):
    z = 2 * np.pi * np.arange(N_WIN) / N_WIN
    return sum(((-1) ** k) * c * np.cos(k * z) for k, c in enumerate(a))


def merit(w):
    """PSLL, CG, ENBW, 3-dB width, SL, WCPL, 6-dB width, OC 75 %, OC 50 %, extremes within 1/2 bin."""
    spec = np.abs(np.fft.rfft(w, N_WIN * PAD))
    db = 20 * lg(np.maximum(spec / spec[0], 1e-300))
    i = int(np.argmax(db < -30)) if np.any(db < -30) else 1
    while db[i + 1] < db[i]:
        i += 1
    psll = db[i:N_WIN * PAD // 4].max()

    def width(level):
        j = int(np.argmax(db < -level))
        x = j - 1 + (-level - db[j - 1]) / (db[j] - db[j - 1])
        return 2 * x / PAD

    def oc(r):
        s = int(r * N_WIN)
        return 100 * np.sum(w[:N_WIN - s] * w[s:]) / np.sum(w ** 2)
    enbw = N_WIN * np.sum(w ** 2) / np.sum(w) ** 2
    sl = -db[PAD // 2]
    half = db[:PAD // 2 + 1]
    return dict(psll=psll, cg=np.sum(w) / N_WIN, enbw=enbw, bw3=width(3.0), sl=sl, wcpl=sl + 10 * lg(enbw),
                bw6=width(6.0), oc75=oc(0.25), oc50=oc(0.5), hi=half.max(), lo=half.min(), half=db[PAD // 2])


def coefficients(cell):
    m = re.search(r"\[([^\]]+)\](/(\d+))?", cell)
    a = [float(x) for x in m.group(1).split(",")]
    if m.group(3):
        a = [x / float(m.group(3)) for x in a]
    return a


def check_3(doc):
    for r in doc.table("3.1"):
        w = ss.get_window("bartlett", N_WIN) if r[0].startswith("triangle") else cosine_window(coefficients(r[0]))
        m = merit(w)
        name = "3.1 " + r[0].split("[")[0].strip()
        for col, key in ((2, "psll"), (5, "cg"), (7, "enbw"), (9, "bw3"), (11, "sl"), (13, "wcpl"), (15, "bw6")):
            printed("%s %s" % (name, key), r[col], m[key])
        oc = r[17].split("/")
        printed(name + " oc75", oc[0], m["oc75"])
        printed(name + " oc50", oc[1], m["oc50"])
    t = ss.windows.triang(N_WIN, sym=False)
    m = merit(t)
    got = doc.find("3.1", r"`triang` differs a little \(CG ([\d.]+), ENBW ([\d.]+), SL ([\d.]+) dB\)")
    for text, key in zip(got, ("cg", "enbw", "sl")):
        printed("3.1 scipy triang " + key, text, m[key])
    for r in doc.table("3.2"):
        a = [float(x) for x in r[1].split(",")]
        m = merit(cosine_window(a))
        name = "3.2 " + r[0]
        parts = [p.strip() for p in r[7].split("/")]
        printed(name + " psll", parts[0], m["psll"])
        printed(name + " nenbw", parts[1], m["enbw"])
        printed(name + " 3-dB width", parts[2], m["bw3"])
        at_half = re.match(r"([-+]?[\d.]+)", parts[3].replace("+-", ""))
        printed(name + " value at 1/2 bin", at_half.group(1) if not parts[3].startswith("+-") else
                parts[3][2:].split()[0], -abs(m["half"]) if not parts[3].startswith("+-") else abs(m["half"]))
        big = re.search(r"largest ([-+][\d.]+)", parts[3])
        if big:
            printed(name + " largest excursion", big.group(1), m["hi"] if big.group(1)[0] == "+" else m["lo"])
        pm = re.search(r"\+-([\d.]+)", parts[3])
        if pm:
            printed(name + " excursion +-", pm.group(1), max(m["hi"], -m["lo"]))
    printed("3.2 HFT90D peak", doc.find("3.2", r"\(([\d.]+) for HFT90D\)")[0],
            sum(float(x) for x in doc.row("3.2", "HFT90D")[1].split(",")))
    nut = merit(cosine_window([0.3635819, 0.4891775, 0.1365995, 0.0106411]))
    got = doc.find("9", r"\(PSLL (-[\d.]+) dB, NENBW ([\d.]+), computed\)")
    printed("9 nuttall PSLL", got[0], nut["psll"])
    printed("9 nuttall NENBW", got[1], nut["enbw"])


# ---- 4, 5, 12: conversions and worked examples ---------------------------------------------------
def check_4_5(doc):
    got = doc.find("4", r"10 lg 1.5 = ([\d.]+) dB and 20 lg 2 = ([\d.]+) dB")
    printed("4 10 lg 1.5", got[0], 10 * lg(1.5))
    printed("4 20 lg 2", got[1], 20 * lg(2.0))
    got = doc.find("4", r"ENOB ([\d.]+) with the rounded constants, ([\d.]+) with the exact ones \(([\d.]+)\)")
    printed("4 ENOB of 62 dB, rounded constants", got[0], (62 - 1.76) / 6.02)
    printed("4 ENOB of 62 dB, exact", got[1], (62 - 10 * lg(1.5)) / (20 * lg(2)))
    printed("4 ENOB of 62 dB, exact, 5 decimals", got[2], (62 - 10 * lg(1.5)) / (20 * lg(2)))
    cell = doc.row("4", "ideal N-bit")[1]
    for bits, text in re.findall(r"(\d+) bit ([\d.]+)", cell):
        printed("4 ideal SNR %s bit" % bits, text, 20 * lg(2) * int(bits) + 10 * lg(1.5))
    got = re.search(r"\(98.08 with 6.02 / 1.76\).*\(146.24 rounded\)", cell)
    report("4 rounded-constant SNRs present", got is not None, "98.08 / 146.24")
    printed("4 16 bit, rounded constants", "98.08", 6.02 * 16 + 1.76)
    printed("4 24 bit, rounded constants", "146.24", 6.02 * 24 + 1.76)
    sb = [0.02, 0.02, 0.01, 0.01]
    got = doc.find("5", r"-> d2 = ([\d.]+), d3 = ([\d.]+) \|")
    printed("5 IEC d2", got[0], (sb[0] + sb[1]) / 0.25)
    printed("5 IEC d3", got[1], (sb[2] + sb[3]) / 0.25)
    got = doc.find("5", r"/ 0.25 = ([\d.]+) \(([\d.]+) %\)")
    rss = math.sqrt(sum(x * x for x in sb)) / 0.25
    printed("5 SMPTE r.s.s.", got[0], rss)
    printed("5 SMPTE r.s.s. %", got[1], 100 * rss)
    got = doc.find("12", r"r.s.s. ([\d.]+) \(([\d.]+) %\); IEC d2 = ([\d.]+), d3 = ([\d.]+)")
    for text, v in zip(got, (rss, 100 * rss, 0.16, 0.08)):
        printed("12 worked check", text, v)
    got = doc.find("5", r"-> d2 = ([\d.]+), d3 = ([\d.]+) \| IEC 60268-3 14.12.8.1")
    printed("5 DFD d2", got[0], 0.03 / (2 * 0.5))
    printed("5 DFD d3", got[1], (0.02 + 0.02) / (2 * 0.5))
    printed("5 TDFD", doc.find("5", r"sqrt\(0.02\^2 \+ 0.03\^2\) / 1.0 = ([\d.]+)")[0], math.hypot(0.02, 0.03))
    got = doc.find("5", r"sqrt\(0.5\) = ([\d.]+) %; at 192 kHz the full-Nyquist figure is "
                        r"10 lg\(95980/19980\) = \+([\d.]+) dB")
    printed("5 noise THD+N", got[0], 100 * 0.01 * math.sqrt(19980 / 24000) / math.sqrt(0.5))
    printed("5 noise THD+N at 192 kHz", got[1], 10 * lg(95980 / 19980))
    got = doc.find("5", r"\"RMS lev dB\" (-[\d.]+), crest factor ([\d.]+); amplitude 0.5 -> (-[\d.]+) and (-[\d.]+) dB")
    for text, v in zip(got, (20 * lg(1 / math.sqrt(2)), math.sqrt(2), 20 * lg(0.5), 20 * lg(0.5 / math.sqrt(2)))):
        printed("5 sox arithmetic", text, v)
    printed("5 HF below LF", doc.find("5", r"HF ([\d.]+) dB below LF")[0], 20 * lg(4))


# ---- 6: AM ---------------------------------------------------------------------------------------
def check_6(doc):
    got = doc.find("6.", r"(-[\d.]+) dBc at mu = 1, (-[\d.]+) dBc at 0.5, (-[\d.]+) dBc at 0.8")
    for text, mu in zip(got, (1.0, 0.5, 0.8)):
        printed("6 side frequency at mu %.1f" % mu, text, 20 * lg(mu / 2))
    printed("6 RF current at mu 1", doc.find("6.", r"= ([\d.]+) at mu = 1 \|")[0], math.sqrt(1.5))
    pc = 2200 / (1 + 0.8 ** 2 / 2)
    got = doc.find("6.", r"P_c = ([\d.]+) W, each side band ([\d.]+) W \(the text")
    printed("6 example 2200 W carrier", got[0], pc)
    printed("6 example 2200 W side band", got[1], pc * 0.8 ** 2 / 4)
    got = doc.find("6.", r"P_c = (\d+) W, mu = ([\d.]+) \(([\d.]+) %; sqrt\(1200/1900\) = ([\d.]+)\)")
    printed("6 example 2500 W carrier", got[0], 2500 - 600)
    mu = math.sqrt(4 * 300 / 1900)
    printed("6 example 2500 W mu", got[1], mu)
    printed("6 example 2500 W mu %", got[2], 100 * mu)
    printed("6 example 2500 W mu exact", got[3], mu)
    pc = 32 / (1 + 0.28 ** 2 / 2)
    got = doc.find("6.", r"P_c = ([\d.]+) W, each side band about ([\d.]+) W, carrier fraction about ([\d.]+)")
    for text, v in zip(got, (pc, pc * 0.28 ** 2 / 4, pc / 32)):
        printed("6 example 32 W", text, v)
    got = doc.find("6.", r"mu = ([\d.]+) %, V_c = (\d+) V, V_m = (\d+) V")
    for text, v in zip(got, (100 * 40 / 60, 30, 20)):
        printed("6 NCERT exemplar", text, v)
    printed("6 NCERT 15.7", doc.find("6.", r"A_min 2 V -> mu = ([\d.]+)")[0], 8 / 12)
    got = doc.find("6.", r"16 / 8 V -> ([\d.]+) %; 16 / 4 V -> (\d+) %; 60 / 40 -> (\d+) %")
    for text, (a, b) in zip(got, ((16, 8), (16, 4), (60, 40))):
        printed("6 quick check %d/%d" % (a, b), text, 100 * (a - b) / (a + b))
    got = doc.find("6.", r"MAX = 2.25 C, MIN = 0 -> \+(\d+) % / -(\d+) %")
    printed("6 FCC example positive", got[0], 125.0)
    printed("6 FCC example negative", got[1], 100.0)
    for m, fm, text in re.findall(r"mu ([\d.]+) at (\d+) kHz -> ([\d.]+) us", "\n".join(doc.section("6."))):
        m, fm = float(m), 1e3 * float(fm)
        printed("6 RC at mu %s" % m, text, 1e6 * math.sqrt(1 - m * m) / (m * 2 * math.pi * fm))
    # 6.1: the LNTwww exercise, then the table
    th = 2 * np.pi * np.arange(65536) / 65536
    x = np.fft.rfft(np.abs(4 + 5 * np.cos(th))) / th.size
    h = 2 * np.abs(x[1:8])
    got = doc.find("6.1", r"gives ([\d.]+), ([\d.]+),\s+([\d.]+), ([\d.]+), ([\d.]+), ([\d.]+); K = ([\d.]+)\)")
    for i in range(6):
        printed("6.1 LNTwww harmonic %d" % (i + 1), got[i], h[i])
    printed("6.1 LNTwww K", got[6], math.sqrt(np.sum((h[1:] / h[0]) ** 2)))
    got = doc.find("6.1", r"K2 = ([\d.]+),\s+K3 = ([\d.]+), K4 about ([\d.]+), K5 about ([\d.]+), K6 about ([\d.]+)")
    for i, text in enumerate(got):
        printed("6.1 LNTwww K%d" % (i + 2), text, h[i + 1] / h[0])
    shifts = {}
    for r in doc.table("6.1"):
        mu = float(r[0])
        for model in (("A", "B") if r[1] == "A or B" else (r[1],)):
            e = np.abs(1 + mu * np.cos(th)) if model == "A" else np.maximum(0.0, 1 + mu * np.cos(th))
            x = np.fft.rfft(e) / th.size
            hh = 2 * np.abs(x[1:52])
            thd = math.sqrt(np.sum(hh[1:50] ** 2)) / hh[0]
            name = "6.1 mu %s model %s" % (r[0], model)
            printed(name + " DC", r[2], x[0].real)
            printed(name + " fundamental", r[3], hh[0])
            for k in range(4):
                printed(name + " H%d/H1" % (k + 2), r[4 + k], hh[k + 1] / hh[0])
            printed(name + " THD", r[8], thd)
            if thd > 1e-12:
                printed(name + " THD dB", r[9], 20 * lg(thd))
            if model == "B":
                shifts[mu] = 100 * (x[0].real - 1)
    for m, text in re.findall(r"mu ([\d.]+) -> \+([\d.]+) %", "\n".join(doc.section("6.1"))):
        printed("6.1 carrier shift model B mu %s" % m, text, shifts[float(m)])
    for m, text in re.findall(r"(1.25|1.50|2.00) ->\s+\+([\d.]+) %", "\n".join(doc.section("6.1"))):
        printed("6.1 carrier shift model B mu %s" % m, text, shifts[float(m)])
    printed("10 pitfall 7: mean envelope at mu 1.5 model B", doc.find("10.", r"mean envelope ([\d.]+) C")[0],
            shifts[1.5] / 100 + 1)
    got = doc.find("6.2", r"only for mu >= ([\d.]+\d)")
    printed("6.2 threshold", got[0], math.sqrt(0.005 / (0.25 - 0.005 / 2)))


# ---- 7, 8, 13: regulations and hum arithmetic ----------------------------------------------------
def mask_73_44(df_khz):
    if 10.2 <= df_khz <= 20:
        return 25.0
    if 20 < df_khz <= 30:
        return 35.0
    if 30 < df_khz <= 60:
        return 5 + df_khz
    if 60 < df_khz <= 75:
        return 65.0
    raise ValueError


def check_7_8(doc):
    cell = doc.row("7.", "73.44 worked points")[1]
    for f, text in re.findall(r"(\d+) kHz: (\d+)(?: dB)?[;,]", cell):
        printed("7 73.44 at %s kHz" % f, text, mask_73_44(float(f)))
    for p, text in re.findall(r"(\d+) kW -> ([\d.]+) dB", cell):
        printed("7 73.44 at %s kW" % p, text, min(43 + 10 * lg(1e3 * float(p)), 80.0))
    printed("7 73.44 80 dB power", re.search(r"80 dB at P = ([\d.]+) W", cell).group(1), 10 ** 3.7)
    printed("7 73.44 at 158 W", re.search(r"at 158 W ([\d.]+) dB", cell).group(1), 43 + 10 * lg(158))
    cell = doc.row("8.", "arithmetic")[1]
    got = re.search(r"= ([\d.]+) % of the 100 % audio amplitude \(a ratio of ([\d.]+)\)", cell).groups()
    printed("8 45 dB as %", got[0], 100 * 10 ** (-45 / 20))
    printed("8 45 dB as a ratio", got[1], 10 ** (-45 / 20))
    got = re.search(r"attenuated ([\d.]+) / ([\d.]+) / ([\d.]+) / ([\d.]+) dB by A weighting and "
                    r"([\d.]+) / ([\d.]+) / ([\d.]+) / ([\d.]+) dB by 468", cell).groups()
    for i, f in enumerate((50, 60, 100, 120)):
        printed("8 A weighting at %d Hz" % f, got[i], -(float(a_raw(f)) + 2.0))
        printed("8 468 weighting at %d Hz" % f, got[4 + i], -float(r468(f)))
    printed("13 45 dB ratio", doc.find("13", r"audio amplitude ratio of ([\d.]+)")[0], 10 ** (-45 / 20))
    zero = 1 / (2 * math.pi * 75e-6)
    cell = doc.row("13", "NRSC-1 curve")[1]
    printed("13 75 us zero", re.search(r"75 us zero \((\d+) Hz\)", cell).group(1), zero)

    def pre(f):
        return 10 * lg((1 + (f / zero) ** 2) / (1 + (f / 8700.0) ** 2))
    got = re.search(r"\+([\d.]+) dB at 1 kHz, \+([\d.]+) at 5 kHz, \+([\d.]+) at 10 kHz, tending to ([\d.]+) dB",
                    cell).groups()
    for text, v in zip(got, (pre(1e3), pre(5e3), pre(1e4), 20 * lg(8700 / zero))):
        printed("13 NRSC-1 curve", text, v)


# ---- 9: scipy oracles -----------------------------------------------------------------------------
def check_9(doc):
    rate = 48000
    n = np.arange(4 * rate)
    s = np.sin(2 * np.pi * 997 * n / rate)
    f, p = ss.welch(s, fs=rate, nperseg=8192, scaling="spectrum")
    k = int(np.argmax(p))
    cell = doc.row("9", "`scaling='spectrum'`")[1]
    printed("9 Hann peak", re.search(r"nperseg 8192 is ([\d.]+)", cell).group(1), p[k])
    printed("9 Hann sum of +-3 bins", re.search(r"is ([\d.]+) = 0.5 x ENBW", cell).group(1), p[k - 3:k + 4].sum())
    f, p = ss.periodogram(s[:rate], fs=rate, window="flattop", scaling="spectrum")
    printed("9 flat-top peak", doc.find("9", r"peaks at ([\d.]+) \(computed\)")[0], p.max())
    x = (1 + 0.5 * np.cos(2 * np.pi * 400 * n[:rate] / rate)) * np.cos(2 * np.pi * 10000 * n[:rate] / rate)
    a = ss.hilbert(x)
    got = doc.find("9", r"largest ([\d.]+), smallest ([\d.]+);")
    printed("9 hilbert largest", got[0], np.abs(a).max())
    printed("9 hilbert smallest", got[1], np.abs(a).min())
    report("9 hilbert real part", bool(np.allclose(a.real, x)), "hilbert(x).real == x")
    printed("9 white-noise density", doc.find("9", r"about 2/fs = ([\d.e-]+) V")[0], 2 / rate)
    rng = np.random.default_rng(9)
    f, p = ss.welch(rng.standard_normal(rate * 20), fs=rate)
    segs = (rate * 20 - 256) // 128 + 1
    report("9 white-noise density within the estimator's spread", abs(np.mean(p[1:-1]) * rate / 2 - 1)
           < 5 / math.sqrt(segs * 127), "mean %.4e, 2/fs %.4e" % (np.mean(p[1:-1]), 2 / rate))
    got = doc.find("9", r"`get_window\('hann', 8\)` = \[([^\]]+)\]")[0]
    want = ss.get_window("hann", 8)
    for text, v in zip(got.split(","), want):
        printed("9 periodic hann(8)", text, v)
    got = doc.find("9", r"`windows.hann\(8\)` \(symmetric by default\) = \[([^\]]+)\]")[0]
    want = ss.windows.hann(8)
    for text, v in zip([t for t in got.split(",") if t.strip() != "..."], want):
        printed("9 symmetric hann(8)", text, v)
    printed("9 sox stat amplitude 0.5", doc.find("9", r"r.m.s. amplitude ([\d.]+)")[0], 0.5 / math.sqrt(2))


# ---- 11, 14, 15 ------------------------------------------------------------------------------------
def check_11_14_15(doc):
    resp = doc.row("11", "**pulse response, Band B**")[1]
    mirrored = doc.row("11", "the same at constant input")[1]
    for f, text in re.findall(r"(\d+) Hz ([-+][\d.]+)", mirrored):
        m = re.search(r"%s Hz: ([-+][\d.]+)" % f, resp)
        printed("11 mirrored pulse response at %s Hz" % f, text, -float(m.group(1)))
    u = math.sqrt(0.6)
    cell = doc.row("14", "0 dBu")[1]
    printed("14 0 dBu", re.search(r"sqrt\(0.6\) V = ([\d.]+) V", cell).group(1), u)
    printed("14 0 dBu (4 digits)", cell.split()[0], u)
    printed("14 dBV - dBu", doc.find("14", r"dBV = dBu - ([\d.]+) dB")[0], 20 * lg(1 / u))
    got = doc.find("14", r"\+4 dBu = ([\d.]+) V; -10 dBV = ([\d.]+) V = (-[\d.]+) dBu")
    printed("14 +4 dBu", got[0], u * 10 ** 0.2)
    printed("14 -10 dBV", got[1], 10 ** -0.5)
    printed("14 -10 dBV in dBu", got[2], 20 * lg(10 ** -0.5 / u))
    got = doc.find("14", r"\+18 dBu \(([\d.]+) V r.m.s.\).*\+24 dBu \(([\d.]+) V r.m.s., ([\d.]+) V peak\)")
    printed("14 +18 dBu", got[0], u * 10 ** 0.9)
    printed("14 +24 dBu", got[1], u * 10 ** 1.2)
    printed("14 +24 dBu peak", got[2], u * 10 ** 1.2 * math.sqrt(2))
    consts = {}
    cell = doc.row("15", "c, d")[1]
    for env, c, d in re.findall(r"(city|residential|rural|quiet rural|galactic)[^\d]*?([\d.]+), ([\d.]+)", cell):
        consts[env] = (float(c), float(d))
    report("15 five environments read", len(consts) == 5, ", ".join(consts))
    order = ["city", "residential", "rural", "quiet rural", "galactic"]
    cell = doc.row("15", "**check values**")[1]
    for f, vals in re.findall(r"([\d.]+) MHz: ([\d. /]+)", cell):
        for env, text in zip(order, vals.split("/")):
            c, d = consts[env]
            printed("15 F_am %s at %s MHz" % (env, f), text, c - d * lg(float(f)))
    k = 1.380649e-23
    kt0 = 10 * lg(k * 290 * 1e3)
    got = doc.find("15", r"k T0 \| (-[\d.]+) dBm/Hz.*= (-[\d.]+) dBm in 9 kHz, (-[\d.]+) dBm in 10 kHz")
    printed("15 kT0", got[0], kt0)
    printed("15 kT0b 9 kHz", got[1], kt0 + 10 * lg(9000))
    printed("15 kT0b 10 kHz", got[2], kt0 + 10 * lg(10000))
    printed("15 business crossing", doc.find("15", r"at ([\d.]+) MHz \|")[0],
            10 ** ((76.8 - 44.3) / (27.7 - 12.3)))
    printed("15 field strength example", doc.find("15", r"9 kHz -> ([\d.]+) dB\(uV/m\)")[0],
            consts["residential"][0] + 10 * lg(9000) - 95.5)


def main():
    if len(sys.argv) != 2:
        sys.exit("usage: check_references.py docs/references.md")
    doc = Doc(sys.argv[1])
    for part in (check_1, check_2, check_3, check_4_5, check_6, check_7_8, check_9, check_11_14_15):
        try:
            part(doc)
        except (KeyError, ValueError, AttributeError, IndexError) as e:
            report(part.__name__, False, "the file no longer has what this check reads: %r" % e)
    print("references: %d checks, %d failed%s" % (count, len(failed), (": " + ", ".join(failed)) if failed else ""))
    sys.exit(1 if failed else 0)


if __name__ == "__main__":
    main()
