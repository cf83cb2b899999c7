"""Pictures (--plot) in PNG, SVG and PDF, and the PDF records (--report) of measure and compare.

Usage: /usr/bin/python3 test_plots.py /path/to/modlens

Checks: each file exists in the asked format (magic bytes), has the expected size (PNG: 1000
pixels wide as io/plot.c draws it; PDF pages: A4, ISO 216, 210 x 297 mm = 595.3 x 841.9 pt, read
back through pdftoppm from poppler-utils), and is not blank (a share of its pixels differs from
the white background: plot frames, traces, text). A bad file name is a usage error that leaves no
file behind.
"""
import os
import re
import struct
import subprocess
import sys
import xml.etree.ElementTree as ET
import zlib

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402

import e2e_common as E  # noqa: E402

FS = 48000


def png_pixels(path):
    """Decodes an 8-bit RGB or RGBA PNG (PNG spec, ISO/IEC 15948: IHDR, IDAT, filters 0-4)."""
    data = open(path, "rb").read()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    pos, idat, w = 8, b"", 0
    while pos < len(data):
        n, typ = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + n]
        if typ == b"IHDR":
            w, h, depth, ctype = struct.unpack(">IIBB", body[:10])
        elif typ == b"IDAT":
            idat += body
        pos += 12 + n
    bpp = {2: 3, 6: 4}[ctype]
    raw = zlib.decompress(idat)
    stride = w * bpp
    out = np.zeros((h, stride), dtype=np.int32)
    prev = np.zeros(stride, dtype=np.int32)
    for y in range(h):
        f = raw[y * (stride + 1)]
        line = np.frombuffer(raw, dtype=np.uint8, count=stride, offset=y * (stride + 1) + 1).astype(np.int32)
        if f == 0:
            cur = line
        elif f == 2:
            cur = (line + prev) & 255
        else:
            cur = line.copy()
            for x in range(stride):
                a = cur[x - bpp] if x >= bpp else 0
                b = prev[x]
                if f == 1:
                    p = a
                elif f == 3:
                    p = (a + b) >> 1
                else:
                    c = prev[x - bpp] if x >= bpp else 0
                    pa, pb, pc = abs(b - c), abs(a - c), abs(a + b - 2 * c)
                    p = a if pa <= pb and pa <= pc else (b if pb <= pc else c)
                cur[x] = (cur[x] + p) & 255
        out[y] = cur
        prev = cur
    return w, h, out.reshape(h, w, bpp)[:, :, :3]


def page_footers(pdf):
    """[(k, N)] of the "page k of N" footers, page by page (pdftotext, form feed between pages)."""
    text = subprocess.run(["pdftotext", "-layout", pdf, "-"], capture_output=True,
                          timeout=E.RUN_TIMEOUT_S).stdout.decode("utf-8", "replace")
    out = []
    for page in text.split("\f"):
        m = re.findall(r"page (\d+) of (\d+)", page)
        if m:
            out.append((int(m[-1][0]), int(m[-1][1])))
    return out


def ppm_pages(pdf, prefix):
    """Renders every page with pdftoppm at 36 dpi (PPM); returns [(width, height, pixels)]."""
    subprocess.run(["pdftoppm", "-r", "36", pdf, prefix], check=True, timeout=60)
    pages = []
    for name in sorted(f for f in os.listdir(".") if f.startswith(prefix + "-") and f.endswith(".ppm")):
        d = open(name, "rb").read()
        parts = d.split(b"\n", 3)  # P6, "w h", 255, data (pdftoppm writes one item per line)
        w, h = map(int, parts[1].split())
        px = np.frombuffer(parts[3], dtype=np.uint8)[:w * h * 3].reshape(h, w, 3)
        pages.append((w, h, px))
    return pages


def ink(px):
    """Share of pixels that are not (near) white."""
    return float(np.mean(np.any(px < 235, axis=2)))


def a4(w, h):
    # 36 dpi: 595.3 pt x 36/72 = 297.6 px, 841.9 pt -> 420.9 px; pdftoppm rounds up
    return abs(w - 298) <= 1 and abs(h - 421) <= 1


def svg_mask_subpaths(path):
    """The emission mask's polylines in an SVG picture (io/plot.c draws them in ML_C_MASK,
    0.85/0.25/0.20, dashed): [[(x, y), ...], ...] from the paths' M/L commands."""
    root = ET.parse(path).getroot()
    out = []
    for e in root.iter():
        st = (e.get("style") or "").replace(" ", "") + ";stroke:" + (e.get("stroke") or "")
        if e.tag.endswith("path") and "stroke:rgb(85%,25%,20%)" in st and "stroke-dasharray" in st:
            sub = None
            tok = e.get("d", "").replace(",", " ").split()
            i = 0
            while i < len(tok):
                if tok[i] in ("M", "L"):
                    pt = (float(tok[i + 1]), float(tok[i + 2]))
                    if tok[i] == "M":
                        sub = [pt]
                        out.append(sub)
                    else:
                        sub.append(pt)
                    i += 3
                else:
                    i += 1
    return out


def mask_plot(exe, ck):
    """The emission mask applies from its first offset out: its line must not run across the
    carrier and its sidebands; a capture that holds only part of the mask says so. The profile is
    47 CFR 73.44's (profiles/am-broadcast-us.ini: from 10.2 kHz to 75 kHz); at 48 kHz I/Q with the
    carrier 2 kHz above the centre the capture holds +-22 kHz of it."""
    fc, a = 2000.0, 0.3
    t = np.arange(4 * FS) / FS
    z = a * (1 + 0.5 * np.cos(2 * np.pi * 1000 * t)) * np.exp(2j * np.pi * fc * t)
    z[:FS] = a * np.exp(2j * np.pi * fc * t[:FS])  # an unmodulated second first
    E.write("mask-iq.wav", np.column_stack([z.real, z.imag]), FS, "FLOAT")
    prof = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "profiles", "am-broadcast-us.ini")
    for ext in ("svg", "pdf"):
        rc, _, err = E.run(exe, ["--limits", prof, "--plot", "mask." + ext, "--kind", "iq", "mask-iq.wav"])
        ck.check("mask --plot %s written" % ext, rc in (0, 1) and os.path.exists("mask." + ext), err.strip())
    subs = svg_mask_subpaths("mask.svg") if os.path.exists("mask.svg") else []
    pts = sorted(p for s in subs for p in s)
    # the carrier lies midway between the two innermost points (f_c -+ 10.2 kHz)
    inner = sorted((p[0] for p in pts), key=lambda x: x)
    ok = len(subs) == 2 and len(pts) >= 4
    if ok:
        lo_side = max(subs, key=lambda s: -max(p[0] for p in s))
        hi_side = max(subs, key=lambda s: min(p[0] for p in s))
        xc = (max(p[0] for p in lo_side) + min(p[0] for p in hi_side)) / 2
        ok = all(not (min(a[0], b[0]) < xc < max(a[0], b[0])) for s in subs for a, b in zip(s, s[1:]))
    ck.check("the mask's line stops where the mask does (two sides, nothing across the carrier)", ok,
             "%d polylines %s" % (len(subs), [len(s) for s in subs]) + (" x %s" % inner[:2] if inner else ""))
    text = subprocess.run(["pdftotext", "mask.pdf", "-"], capture_output=True, timeout=60).stdout.decode() \
        if os.path.exists("mask.pdf") else ""
    ck.check("a note says the capture holds only part of the mask",
             "the capture covers the mask only to +-22.0 kHz of its 75.0 kHz" in text, text[-300:])
    # a mask the capture holds whole: no such note
    open("mask-in.ini", "w").write("[mask]\npoints = 5000:-25, 10000:-25, 10000:-35, 15000:-35\nrbw_hz = 300\n")
    rc, _, err = E.run(exe, ["--limits", "mask-in.ini", "--plot", "mask-in.pdf", "--kind", "iq", "mask-iq.wav"])
    text = subprocess.run(["pdftotext", "mask-in.pdf", "-"], capture_output=True, timeout=60).stdout.decode() \
        if os.path.exists("mask-in.pdf") else ""
    ck.check("a mask the capture holds whole: no note", rc in (0, 1) and "emission mask" in text
             and "covers" not in text, err.strip())


def main():
    exe = E.modlens_path()
    ck = E.Checker("test_plots")
    with E.scratch():
        t = np.arange(5 * FS) / FS
        x = 0.5 * np.sin(2 * np.pi * 997 * t) + 1e-3 * np.sin(2 * np.pi * 2 * 997 * t) \
            + 1e-4 * np.sin(2 * np.pi * 50 * t) + np.random.default_rng(3).normal(0, 1e-4, t.size)
        E.write("tone.wav", x, FS, "FLOAT")
        # I/Q with a reference channel: z = A (1 + m cos wt) e^{j 2 pi fc t}, third channel cos wt
        fc, m, a = 3000.0, 0.7, 0.4
        tq = np.arange(4 * FS) / FS
        ref = np.cos(2 * np.pi * 1000 * tq)
        z = a * (1 + m * ref) * np.exp(2j * np.pi * fc * tq)
        E.write("am.wav", np.column_stack([z.real, z.imag, 0.5 * ref]), FS, "FLOAT")

        for ext in ("png", "svg", "pdf"):
            for name, args in (("tone", ["tone.wav"]), ("am", ["--reference-channel", "3", "am.wav"])):
                out = "%s.%s" % (name, ext)
                rc, _, err = E.run(exe, ["--plot", out] + args)
                ok = ck.check("%s --plot %s exit 0" % (name, ext), rc == 0 and os.path.exists(out), err.strip())
                if not ok:
                    continue
                data = open(out, "rb").read()
                if ext == "png":
                    w, h, px = png_pixels(out)
                    ck.check(name + " png 1000 px wide", w == 1000, "%dx%d" % (w, h))
                    # spectrum panel 0.42 w; if/iq adds the envelope row (io/plot.c ml_plot_height)
                    ck.check(name + " png height", (h > 700) if name == "am" else (380 < h < 500), "h=%d" % h)
                    ck.check(name + " png not blank", ink(px) > 0.03, "ink %.3f" % ink(px))
                    # the trace colour of the first spectrum (io/plot.c ML_C_A = 0.09, 0.45, 0.47)
                    teal = np.all(np.abs(px - np.array([23, 115, 120])) < 30, axis=2)
                    ck.check(name + " png has the spectrum trace", teal.sum() > 500, "%d px" % teal.sum())
                elif ext == "svg":
                    root = ET.fromstring(data)
                    paths = [e for e in root.iter() if e.tag.endswith("path")]
                    ck.check(name + " svg parses with drawing", root.tag.endswith("svg") and len(paths) > 20,
                             "%d paths" % len(paths))
                    ck.check(name + " svg width 1000", root.get("width", "").startswith("1000"), root.get("width"))
                else:
                    ck.check(name + " pdf magic", data[:5] == b"%PDF-")
                    pages = ppm_pages(out, name + "_plot")
                    ck.check(name + " pdf one page, not blank", len(pages) == 1 and ink(pages[0][2]) > 0.03,
                             "%d pages" % len(pages))

        # PDF records: measure (audio: record + pictures, at least 2 pages; iq with a limits
        # profile too); the footers count the pages: "page k of N" on page k, N the page count
        open("lim.ini", "w").write("[audio]\nthd_pct_max = 1.0\nsnr_db_min = 120\n")
        for name, args, want_pages in (("tone", ["--limits", "lim.ini", "tone.wav"], 2),
                                       ("am", ["--reference-channel", "3", "am.wav"], 2)):
            rc, _, err = E.run(exe, ["--report", name + "_rec.pdf"] + args)
            ck.check(name + " --report exit (1: the snr limit fails for tone)", rc == (1 if name == "tone" else 0),
                     "rc=%d %s" % (rc, err.strip()))
            if not os.path.exists(name + "_rec.pdf"):
                ck.check(name + " report written", False)
                continue
            pages = ppm_pages(name + "_rec.pdf", name + "_rec")
            ck.check(name + " report pages", len(pages) >= want_pages, "%d" % len(pages))
            footers = page_footers(name + "_rec.pdf")
            ck.check(name + " report footers page k of N", footers == [(k + 1, len(pages)) for k in range(len(pages))],
                     repr(footers))
            ck.check(name + " report pages A4", all(a4(w, h) for w, h, _ in pages),
                     repr([(w, h) for w, h, _ in pages]))
            ck.check(name + " report pages not blank", all(ink(p) > 0.02 for _, _, p in pages),
                     repr([round(ink(p), 3) for _, _, p in pages]))
            # the FAIL of the snr check shows in its colour (io/plot.c ML_C_FAIL = 0.78, 0.13, 0.13)
            if name == "tone":
                red = np.all(np.abs(pages[0][2].astype(int) - np.array([199, 33, 33])) < 40, axis=2)
                ck.check("tone report shows the failed check in red", red.sum() > 20, "%d px" % red.sum())

        # compare: pictures and record
        E.write("tone2.wav", x * 0.98, FS, "FLOAT")
        p = subprocess.run([exe, "compare", "--plot", "cmp.png", "--report", "cmp.pdf", "tone.wav", "tone2.wav"],
                           capture_output=True, timeout=E.RUN_TIMEOUT_S)
        ck.check("compare --plot --report runs", p.returncode in (0, 1) and os.path.exists("cmp.png")
                 and os.path.exists("cmp.pdf"), p.stderr.decode().strip())
        if os.path.exists("cmp.png"):
            w, h, px = png_pixels("cmp.png")
            orange = np.all(np.abs(px - np.array([219, 115, 33])) < 30, axis=2)  # ML_C_B: B's trace
            ck.check("compare png: B overlaid", w == 1000 and orange.sum() > 300, "%d px" % orange.sum())
        if os.path.exists("cmp.pdf"):
            pages = ppm_pages("cmp.pdf", "cmp")
            ck.check("compare report: 2 A4 pages, not blank",
                     len(pages) == 2 and all(a4(w, h) and ink(q) > 0.02 for w, h, q in pages),
                     repr([(w, h, round(ink(q), 3)) for w, h, q in pages]))

        mask_plot(exe, ck)

        # bad names: usage error, one line, nothing written
        for args, bad in ((["--plot", "x.txt", "tone.wav"], "x.txt"), (["--report", "x.png", "tone.wav"], "x.png"),
                          (["--plot", "tone.wav", "tone.wav"], None)):
            before = open("tone.wav", "rb").read()
            rc, out, err = E.run(exe, args)
            ck.check("bad %s: exit 2, one line" % " ".join(args[:2]), rc == 2 and err.count("\n") == 1
                     and err.startswith("modlens: "), "rc=%d %r" % (rc, err))
            if bad:
                ck.check("bad %s: no file" % bad, not os.path.exists(bad))
            else:
                ck.check("--plot naming the input leaves it untouched", open("tone.wav", "rb").read() == before)
        leftovers = [f for f in os.listdir(".") if ".png." in f or ".pdf." in f or ".svg." in f]
        ck.check("no temporary files left", not leftovers, repr(leftovers))
    ck.finish()


if __name__ == "__main__":
    main()
