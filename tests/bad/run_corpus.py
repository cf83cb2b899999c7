#!/usr/bin/python3
"""Runs the bad-input corpus (cases.txt over files/) against the modlens executable.

Arguments run as `modlens measure ARGS`, or `modlens compare ...` / `modlens tone ...` /
`modlens log ...` when the first word is that command (error outcomes only), or `modlens sweep ...`
(every outcome). Besides the regular files' contents, the kind of every entry of the scratch folder
(file, FIFO, device, link and its target) must not change.

Usage: /usr/bin/python3 tests/bad/run_corpus.py /path/to/modlens

Each case prints one PASS/FAIL line; the script exits 1 when any failed. A crash (a signal), a
hang (over 60 s) or any other exit status than the expected one fails, and so does NaN or
infinity anywhere in a report. MODLENS_WRAP (for example "valgrind --error-exitcode=99 -q")
is put in front of every modlens command.
"""
import hashlib
import json
import os
import re
import shlex
import shutil
import stat
import subprocess
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
TIMEOUT_S = 60 * (10 if os.environ.get("MODLENS_WRAP") else 1)
# an empty configuration folder: a developer's own settings file must not change any case
_NO_SETTINGS = tempfile.TemporaryDirectory(prefix="modlens-xdg-")
os.chmod(_NO_SETTINGS.name, 0o755)  # cases run as another user must see that it is empty
os.environ["XDG_CONFIG_HOME"] = _NO_SETTINGS.name
NOBODY = 65534


def load_cases():
    cases = []
    with open(os.path.join(HERE, "cases.txt")) as f:
        for n, line in enumerate(f, 1):
            if not line.strip() or line.lstrip().startswith("#"):
                continue
            parts = [p.strip() for p in line.rstrip("\n").split("|", 2)]
            if len(parts) != 3:
                sys.exit("cases.txt:%d: not 'name | arguments | outcome'" % n)
            name, args, outcome = parts
            kind, _, regex = outcome.partition(" ")
            if kind not in ("error", "report", "fail") or not regex:
                sys.exit("cases.txt:%d: outcome must be 'error|report|fail REGEX'" % n)
            cases.append((name, shlex.split(args), kind, regex.strip()))
    return cases


def digest_tree(d):
    h = {}
    for name in sorted(os.listdir(d)):
        p = os.path.join(d, name)
        st = os.lstat(p)
        h[name] = (stat.S_IFMT(st.st_mode), os.readlink(p) if os.path.islink(p) else None)
        if os.path.isfile(p) and not os.path.islink(p) and os.access(p, os.R_OK) and name != "unreadable.wav":
            with open(p, "rb") as f:
                h[name] += (hashlib.sha256(f.read()).hexdigest(),)
    return h


def no_nonfinite_json(text):
    bad = []
    try:
        json.loads(text, parse_constant=lambda tok: bad.append(tok))
    except ValueError:
        return False
    return not bad


COMMANDS = (["compare"], ["tone"], ["sweep"], ["log"])


def with_options(args, opts):
    """opts added to args, after the command word when args start with one."""
    return args[:1] + opts + args[1:] if args[:1] in COMMANDS else opts + args


def main():
    if len(sys.argv) != 2:
        sys.exit(__doc__)
    exe = os.path.abspath(sys.argv[1])
    wrap = shlex.split(os.environ.get("MODLENS_WRAP", ""))
    as_root = os.geteuid() == 0
    failed, count = [], 0
    tmp = tempfile.mkdtemp(prefix="modlens-bad-")
    try:
        work = os.path.join(tmp, "w")
        shutil.copytree(os.path.join(HERE, "files"), work)
        os.chmod(tmp, 0o755)
        for root, dirs, files in os.walk(work):
            os.chmod(root, 0o777)  # writable by the unprivileged user the runs use under root
            for fn in files:
                os.chmod(os.path.join(root, fn), 0o644)
        os.mkfifo(os.path.join(work, "fifo.wav"))
        os.mkfifo(os.path.join(work, "fifo.png"))
        os.symlink("good.wav", os.path.join(work, "plot-good.png"))  # an input a picture's name reaches
        # someone's data: 100 kB without a single line break, and a CSV of another program
        with open(os.path.join(work, "foreign-100k.csv"), "wb") as f:
            f.write(bytes((7 * i) % 251 + 1 if (7 * i) % 251 + 1 != 10 else 11 for i in range(100000)))
        with open(os.path.join(work, "other.csv"), "w") as f:
            f.write("when,what\n2024-01-01,x\n")
        os.mkdir(os.path.join(work, "adir.wav"))
        # links: to an input, to nothing, and to a device node (made here when allowed, else the
        # system's null device, which an unprivileged process cannot replace anyway)
        os.symlink("good.wav", os.path.join(work, "link-good.wav"))
        os.symlink("nowhere.json", os.path.join(work, "dangling.json"))
        os.symlink("nowhere.wav", os.path.join(work, "dangling.wav"))
        try:
            os.mknod(os.path.join(work, "node.dev"), 0o666 | stat.S_IFCHR, os.makedev(1, 3))
        except OSError:
            os.symlink("/dev/null", os.path.join(work, "node.dev"))
        shutil.copy(os.path.join(work, "good.wav"), os.path.join(work, "unreadable.wav"))
        os.chmod(os.path.join(work, "unreadable.wav"), 0)
        out = os.path.join(work, "out")
        os.mkdir(out)
        os.chmod(out, 0o777)

        # root reads anything: cases naming the unreadable file run as nobody, with a copy of the
        # executable that nobody can reach wherever the build folder lies
        exe_nobody = os.path.join(tmp, "modlens")
        shutil.copy(exe, exe_nobody)
        os.chmod(exe_nobody, 0o755)

        def run(args):
            drop = as_root and "unreadable.wav" in args
            pre = (lambda: (os.setgid(NOBODY), os.setuid(NOBODY))) if drop else None
            cmd = ["measure"] + args if args[:1] not in COMMANDS else args
            try:
                p = subprocess.run(wrap + [exe_nobody if drop else exe] + cmd, cwd=work, capture_output=True,
                                   timeout=TIMEOUT_S, preexec_fn=pre)
            except subprocess.TimeoutExpired:
                return None, "", "timeout"
            return p.returncode, p.stdout.decode("utf-8", "replace"), p.stderr.decode("utf-8", "replace")

        for name, args, kind, regex in load_cases():
            before = digest_tree(work)
            problems = []
            if kind == "error":
                full = args if "--output" in args or args[:1] in (["tone"], ["log"]) else \
                    with_options(args, ["--output", "out/report.json"])
                rc, so, se = run(full)
                lines = se.splitlines()
                if rc != 2:
                    problems.append("exit %r, want 2" % rc)
                if len(lines) != 1 or not lines[0].startswith("modlens: "):
                    problems.append("stderr is not one 'modlens: ' line: %r" % se[:300])
                elif re.search(regex, lines[0], re.I) is None:
                    problems.append("stderr %r does not match /%s/" % (lines[0], regex))
                if so:
                    problems.append("stdout not empty (%d bytes)" % len(so))
                if os.listdir(out) or os.path.exists(os.path.join(work, "nofolder")):
                    problems.append("something was written: %r" % os.listdir(out))
            else:
                if args[:1] in (["compare"], ["tone"], ["log"]):
                    sys.exit("cases.txt: %s: only error outcomes for compare, tone and log" % name)
                want = 0 if kind == "report" else 1
                rc, so, se = run(with_options(args, ["--format", "json", "--output", "out/report.json"]))
                text = ""
                if os.path.exists(os.path.join(out, "report.json")):
                    with open(os.path.join(out, "report.json")) as f:
                        text = f.read()
                if rc != want:
                    problems.append("exit %r, want %d: %r" % (rc, want, se[:300]))
                if not text or not no_nonfinite_json(text):
                    problems.append("no valid JSON report without NaN/Infinity")
                else:
                    notes = json.loads(text).get("notes", [])
                    if regex != "-" and not any(re.search(regex, n, re.I) for n in notes):
                        problems.append("no note matches /%s/: %r" % (regex, notes))
                for fmt in ("text", "csv"):
                    rc2, so2, se2 = run(with_options(args, ["--format", fmt]))
                    if rc2 != want or re.search(r"\b(nan|inf|infinity)\b", so2, re.I):
                        problems.append("%s report: exit %r or NaN/inf in it" % (fmt, rc2))
            for fn in os.listdir(out):
                os.unlink(os.path.join(out, fn))
            if digest_tree(work) != before:
                problems.append("an input file changed")
            count += 1
            ok = not problems
            print("%s %s: modlens %s%s" % ("PASS" if ok else "FAIL", name,
                                           " ".join(args if args[:1] in COMMANDS else ["measure"] + args),
                                                  "" if ok else " -- " + "; ".join(problems)), flush=True)
            if not ok:
                failed.append(name)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    print("bad-input corpus: %d cases, %d failed%s" % (count, len(failed), (": " + ", ".join(failed)) if failed else ""))
    sys.exit(1 if failed else 0)


if __name__ == "__main__":
    main()
