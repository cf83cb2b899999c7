"""End-to-end test: modlens never destroys a file it was not asked to write.

Usage: /usr/bin/python3 test_safety.py /path/to/modlens

What is expected (README "Bad input", DEVELOPERS.md "Safe output files"): an output is checked
before any work and refused when it is an input or another output (through links), not a
regular file, in a missing folder, or too long a path; a link to a regular file is written
through (the link stays a link); everything is written through temporaries and published only on
success, so an error exit leaves nothing at all; no path is ever cut to fit a buffer; names from
outside reach the terminal only escaped. The cases the bad-input corpus cannot express (long
paths, redirections, control bytes in file names, several commands) are here.
"""
import json
import os
import struct
import subprocess
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402

import e2e_common as E  # noqa: E402

FS = 48000


def run(exe, args, stdout=subprocess.PIPE):
    # live runs must not start an audio server of their own (JACK's server slots are shared)
    env = dict(os.environ, JACK_NO_START_SERVER="1")
    p = subprocess.run(E.WRAP + [exe] + [str(a) for a in args], stdout=stdout, stderr=subprocess.PIPE,
                       timeout=E.RUN_TIMEOUT_S, env=env)
    out = p.stdout.decode("utf-8", "replace") if p.stdout is not None else ""
    return p.returncode, out, p.stderr.decode("utf-8", "replace")


def one_error(rc, err):
    lines = err.splitlines()
    return rc == 2 and len(lines) == 1 and lines[0].startswith("modlens: ")


def listing(d="."):
    return sorted(os.listdir(d))


def content(path):
    with open(path, "rb") as f:
        return f.read()


def nest(base, total):
    """Folders of 200-byte names under base, then a file name filling the path to `total` bytes."""
    p = os.path.abspath(base)
    while total - len(p) > 220:
        p = os.path.join(p, "d" * 200)
        os.makedirs(p, exist_ok=True)
    return os.path.join(p, "a" * (total - len(p) - 1 - 4) + ".wav")


def check_long_paths(ck, exe, good):
    # the input's path is 1023 bytes and the report's adds ".json": a path cut to 1023 bytes (a
    # fixed 1024-byte buffer) would name the input, and the report would replace the recording
    inp = nest("long", 1023)
    with open(inp, "wb") as f:
        f.write(good)
    out = inp + ".json"
    rc, _, err = run(exe, ["measure", "--format", "json", "--output", out, inp])
    ck.check("1023-byte input, 1028-byte --output: exit 0", rc == 0, err.strip()[:200])
    ck.check("... the recording is unchanged", content(inp) == good)
    ck.check("... the report is at its full name", os.path.exists(out) and json.loads(content(out))["input"]["kind"] == "audio")
    ck.check("... nothing else in the folder", listing(os.path.dirname(inp)) == sorted([os.path.basename(inp),
                                                                                         os.path.basename(out)]))
    # an input path of 1024 bytes and more opens (libsndfile alone stops at 1023)
    for n in (1024, 1500, 4000):
        p = nest("long", n)
        with open(p, "wb") as f:
            f.write(good)
        rc, out_text, err = run(exe, ["measure", "--format", "json", p])
        ck.check("%d-byte input path: measured" % n, rc == 0 and json.loads(out_text)["audio"]["fundamental_hz"] > 0,
                 err.strip()[:200])
    # a path of PATH_MAX (4096) bytes or more is refused by name, never cut
    huge = nest("long", 4200)
    rc, out_text, err = run(exe, ["measure", "--output", huge, "good.wav"])
    ck.check("4200-byte --output: refused, one line, nothing written", one_error(rc, err) and "bytes long" in err
             and out_text == "" and not os.path.exists(huge), err.strip()[-120:])


def check_links_and_nodes(ck, exe, good):
    with open("target.json", "w") as f:
        f.write("old")
    os.symlink("target.json", "link.json")
    rc, _, err = run(exe, ["measure", "--format", "json", "--output", "link.json", "good.wav"])
    ck.check("--output through a link to a regular file: exit 0", rc == 0, err.strip())
    ck.check("... the link is still a link to the same target",
             os.path.islink("link.json") and os.readlink("link.json") == "target.json")
    ck.check("... the target holds the report", json.loads(content("target.json"))["input"]["path"] == "good.wav")
    os.symlink("made.wav", "tolink.wav")
    rc, _, err = run(exe, ["tone", "--seconds", "0.1", "--out", "tolink.wav"])
    ck.check("tone --out a dangling link: refused, the link stays", one_error(rc, err) and os.path.islink("tolink.wav")
             and not os.path.exists("made.wav"), err.strip())
    os.mkfifo("pipe.json")
    rc, _, err = run(exe, ["measure", "--output", "pipe.json", "good.wav"])
    ck.check("--output a FIFO: refused at once (no blocking), still a FIFO", one_error(rc, err) and "FIFO" in err
             and os.path.exists("pipe.json") and not os.path.isfile("pipe.json"), err.strip())
    try:
        os.mknod("null.dev", 0o666 | 0o020000, os.makedev(1, 3))
        made = True
    except OSError:
        made = False
    if made:
        rc, _, err = run(exe, ["measure", "--output", "null.dev", "good.wav"])
        ck.check("--output a device node: refused, still the node", one_error(rc, err) and "device" in err
                 and os.path.exists("null.dev") and not os.path.isfile("null.dev"), err.strip())
    else:
        ck.check("--output a device node: skipped (mknod not allowed here)", True)
    # stdout appended into the input ("modlens measure good.wav >> good.wav")
    with open("good.wav", "ab") as f:
        rc, _, err = run(exe, ["measure", "good.wav"], stdout=f)
    ck.check("stdout redirected into the input: refused, input unchanged", one_error(rc, err)
             and "redirected into an input" in err and content("good.wav") == good, err.strip())


def check_all_or_nothing(ck, exe, good):
    os.mkdir("out")
    x = 0.5 * np.sin(2 * np.pi * 1000 * np.arange(FS) / FS)
    x[4000] = np.nan
    E.write("nan.wav", x, FS, "FLOAT")
    for what, args in [
        ("measure, the analysis fails", ["measure", "--plot", "out/p.png", "--report", "out/r.pdf", "--output",
                                         "out/r.json", "nan.wav"]),
        ("compare, side B fails", ["compare", "--plot", "out/p.png", "--report", "out/r.pdf", "--output", "out/r.json",
                                   "good.wav", "nan.wav"]),
        ("measure, --report in a missing folder", ["measure", "--plot", "out/p.png", "--report", "nofolder/r.pdf",
                                                   "good.wav"]),
        ("compare --plot X --output X", ["compare", "--plot", "out/x.png", "--output", "out/x.png", "good.wav",
                                         "good.wav"]),
        ("live, no such device", ["live", "--device", "nosuchdevice", "--seconds", "1", "--save", "out/cap.wav",
                                  "--plot", "out/p.png", "--output", "out/r.json"]),
    ]:
        before = listing()
        rc, out_text, err = run(exe, args)
        ck.check("%s: one error line, nothing written anywhere" % what, one_error(rc, err) and out_text == ""
                 and listing("out") == [] and listing() == before, "%r out/=%r" % (err.strip(), listing("out")))
    # tone: an existing file is kept unless --force; --force replaces it whole
    rc, _, err = run(exe, ["tone", "--seconds", "0.2", "--out", "out/t.wav"])
    first = content("out/t.wav") if rc == 0 else b""
    rc2, _, err2 = run(exe, ["tone", "--seconds", "0.5", "--freq", "500", "--out", "out/t.wav"])
    ck.check("tone over an existing file: refused, file unchanged", rc == 0 and one_error(rc2, err2)
             and "--force" in err2 and content("out/t.wav") == first, err2.strip())
    rc3, _, err3 = run(exe, ["tone", "--seconds", "0.5", "--freq", "500", "--out", "out/t.wav", "--force"])
    ck.check("tone --force: replaced, no temporary left", rc3 == 0 and content("out/t.wav") != first
             and listing("out") == ["t.wav"], err3.strip())


def check_printable(ck, exe, good):
    name = "bad\x1b]0;title\x07\n.wav"
    with open(name, "wb") as f:
        f.write(good)
    rc, out_text, err = run(exe, ["measure", "--channel", "2", name])
    ck.check("control bytes in a file name: one escaped error line", one_error(rc, err) and "\x1b" not in err
             and "\\x1b]0;title\\x07\\n.wav" in err, repr(err))
    rc, out_text, err = run(exe, ["measure", name])
    ck.check("... and an escaped report header", rc == 0 and "\x1b" not in out_text and "\x07" not in out_text
             and "\\x1b]0;title" in out_text, repr(out_text[:120]))
    rc, out_text, err = run(exe, ["measure", "--format", "json", name])
    ck.check("... and a JSON report that keeps the path (escaped)", rc == 0
             and json.loads(out_text)["input"]["path"] == "bad\\x1b]0;title\\x07\\n.wav", out_text[:200])
    rc, out_text, err = run(exe, ["measure", "--kind", "bogus\x1b[2J", "good.wav"])
    ck.check("control bytes in an option value: escaped", one_error(rc, err) and "bogus\\x1b[2J" in err, repr(err))


def check_dates(ck, exe):
    for when, ok in [("2024-02-30T00:00:00Z", False), ("2023-02-29T12:00:00Z", False),
                     ("2024-02-29T12:00:00Z", True)]:
        rc, _, err = run(exe, ["log", "--start-time", when, "--seconds", "0.5", "--out", "log.csv", "good.wav"])
        if ok:
            ck.check("log --start-time %s: accepted" % when, rc == 0, err.strip())
        else:
            ck.check("log --start-time %s: refused (no such day)" % when, one_error(rc, err) and "--start-time" in err,
                     err.strip())
        for f in os.listdir("."):
            if f.startswith("log") and f.endswith(".csv"):
                os.unlink(f)


def check_header_only(ck, exe):
    # FLAC: "fLaC", one STREAMINFO block (last, 34 bytes) for 8 kHz mono 16-bit, 0 samples, no frames
    info = struct.pack(">HH", 4096, 4096) + bytes(6) + struct.pack(">Q", (8000 << 44) | (15 << 36))
    with open("empty.flac", "wb") as f:
        f.write(b"fLaC" + bytes([0x80, 0, 0, 34]) + info + bytes(16))
    before = listing()
    rc, out_text, err = run(exe, ["log", "--out", "rows.csv", "empty.flac"])
    ck.check("log of a header-only FLAC: 'no audio frames', exit 2, nothing written", one_error(rc, err)
             and "no audio frames" in err and listing() == before, err.strip())


def main():
    exe = E.modlens_path()
    ck = E.Checker("test_safety")
    with E.scratch():
        E.write("good.wav", 0.5 * np.sin(2 * np.pi * 1000 * np.arange(FS) / FS), FS, "PCM_16")
        good = content("good.wav")
        check_long_paths(ck, exe, good)
        check_links_and_nodes(ck, exe, good)
        check_all_or_nothing(ck, exe, good)
        check_printable(ck, exe, good)
        check_dates(ck, exe)
        check_header_only(ck, exe)
    ck.finish()


if __name__ == "__main__":
    main()
