"""The manual page modlens(1) built by scripts/gen-manpage from the executable's --help.

Built page: groff (-ww) and man (--warnings) render it without a warning; it has the usual
sections; its version is the executable's; every command of `modlens --help` has its section,
which holds every option of that command's --help (every --name outside quoted references to
other commands, read by this test's own rules in helpdoc.py) and every synopsis line; the top-level
options are under OPTIONS; each command's exit-status sentence is under EXIT STATUS; SAFETY
holds the help's safety paragraph and the cautions (transmitter output, RF exposure, mains and
high voltage, licence and local regulations); SEE ALSO names no other program's page; every
option used in EXAMPLES belongs to its command, and the examples that need no sound card run
(exit status 0 or 1, not a usage error). The built page is what the generator writes for the
executable as it is now (so it cannot lag behind --help).
Generator, with tests/e2e/fake_modlens.py (fixed help texts): a command it has never seen gets
its section; a term list split over two lines stays one entry; the shared safety paragraph is
not repeated per command; SOURCE_DATE_EPOCH makes the output reproducible; a failing --help or
a template without a placeholder is one line on stderr, exit 1 and no page.

usage: test_manpage.py MODLENS MANPAGE TEMPLATE GENERATOR SOURCE_ROOT
"""
import json
import os
import re
import shlex
import shutil
import sys
import tempfile

from e2e_common import Checker
import helpdoc

SECTIONS = ["NAME", "SYNOPSIS", "DESCRIPTION", "OPTIONS", "COMMANDS", "EXIT STATUS", "ENVIRONMENT", "FILES",
            "SAFETY", "EXAMPLES", "SEE ALSO"]


def normal(text):
    """Rendered text with typographic hyphens, minus signs and quotes made ASCII."""
    for a, b in (("\u2010", "-"), ("\u2212", "-"), ("\u2019", "'"), ("\u2018", "'"), ("\u00ad", "")):
        text = text.replace(a, b)
    return text


def words(text):
    return " ".join(text.split())


def render(page, width=80):
    env = dict(os.environ, MANWIDTH=str(width), LC_ALL="C.UTF-8")
    env.pop("MAN_KEEP_FORMATTING", None)
    return helpdoc.run(["man", "--warnings", "-l", page], env=env)


def sections(text):
    """{heading: text} of the rendered page; command subsections under 'modlens CMD'."""
    out, cur = {}, None
    for line in text.splitlines():
        if re.match(r"^(MODLENS\(1\)|modlens \S+) .*MODLENS\(1\)$", line):   # header and footer
            continue
        if re.match(r"^[A-Z][A-Z ]+$", line):
            cur = line.strip()
        elif re.match(r"^   modlens [a-z][a-z0-9-]*$", line):
            cur = line.strip()
        elif cur is not None:
            out[cur] = out.get(cur, "") + line + "\n"
            continue
        else:
            continue
        out.setdefault(cur, "")
    return out


def has_option(text, opt):
    return re.search(r"(?<![\w-])%s(?![\w-])" % re.escape(opt), text) is not None


def built_page(c, exe, page, template, generator, root):
    names = helpdoc.commands(exe)
    g = helpdoc.run(["groff", "-man", "-Tutf8", "-ww", "-z", page])
    c.check("groff -man -ww: no warning", g.returncode == 0 and g.stderr.strip() == "", g.stderr.strip()[:300])
    for width in (80, 60):
        r = render(page, width)
        c.check("man --warnings -l at %d columns: no warning" % width,
                r.returncode == 0 and r.stderr.strip() == "" and len(r.stdout) > 2000,
                "rc %d, stderr %r" % (r.returncode, r.stderr.strip()[:300]))
    r = render(page, 80)
    text = normal(r.stdout)
    long_lines = [l for l in text.splitlines() if len(l) > 80]
    c.check("no rendered line wider than 80 columns", not long_lines, "%r" % long_lines[:2])
    sec = sections(text)
    present = [s for s in SECTIONS if s in sec]
    order = [h for h in sec if h in SECTIONS]
    c.check("sections %s in this order" % ", ".join(SECTIONS), present == SECTIONS and order == SECTIONS,
            "got %s" % order)

    version = helpdoc.run([exe, "--version"]).stdout.split()[-1]
    c.check("the footer names modlens %s (from --version)" % version,
            re.search(r"^modlens %s\s" % re.escape(version), text.splitlines()[-1]) is not None,
            text.splitlines()[-1])

    main_help = helpdoc.help_text(exe)
    top_opts = helpdoc.options(helpdoc.strip_references(main_help, names), names)
    c.check("OPTIONS: the top-level options %s" % top_opts,
            top_opts and all(has_option(sec.get("OPTIONS", ""), o) for o in top_opts) and "--version" in top_opts)

    synopsis = words(sec.get("SYNOPSIS", ""))
    for cmd in names:
        h = helpdoc.help_text(exe, cmd)
        body = sec.get("modlens " + cmd)
        if not c.check("COMMANDS has a section 'modlens %s'" % cmd, body is not None):
            continue
        opts = helpdoc.options(h, names)
        missing = [o for o in opts if not has_option(body, o)]
        c.check("modlens %s: every option of its --help in its section (%d)" % (cmd, len(opts)),
                opts and not missing, "missing %s" % missing)
        usage = [l.strip()[len("usage:"):].strip() if l.startswith("usage:") else l.strip()
                 for l in h.splitlines() if l.startswith("usage:") or re.match(r"^\s+modlens %s\b" % cmd, l)]
        for u in usage:
            c.check("modlens %s: synopsis line %r in SYNOPSIS and its section" % (cmd, u),
                    words(u) in synopsis and words(u) in words(body))
        for s in re.findall(r"Exit status:\s*(.*?\.)(?=\s|$)", words(h)):
            c.check("modlens %s: its exit status under EXIT STATUS" % cmd, words(s) in words(sec.get("EXIT STATUS", "")),
                    s)
        c.check("modlens %s: the shared safety paragraph is not repeated in its section" % cmd,
                "Use a proper RF sampler" not in words(body))

    safety_help = re.search(r"Safety:(.*)", words(main_help))
    safety = words(sec.get("SAFETY", ""))
    c.check("SAFETY holds --help's safety paragraph",
            safety_help is not None and words(safety_help.group(1)).lower() in safety.lower())
    for topic, pat in (("transmitter output", r"transmitter's output"), ("RF exposure", r"RF exposure"),
                       ("mains and high voltage", r"[Mm]ains-powered.*lethal voltages"),
                       ("dummy load", r"dummy load"), ("licence and local regulations", r"licence and local regulations")):
        c.check("SAFETY: %s" % topic, re.search(pat, safety) is not None)
    see = sec.get("SEE ALSO", "")
    c.check("SEE ALSO names only the project's own documents (no other program's page)",
            re.search(r"\b[\w.-]+\(\d\w*\)", see) is None and "README.md" in see, words(see)[:200])

    check_examples(c, exe, names, sec.get("EXAMPLES", ""), root)

    # the built page is the generator's output for this executable (ignoring the date)
    with tempfile.TemporaryDirectory() as d:
        fresh = os.path.join(d, "modlens.1")
        g = helpdoc.run([sys.executable, generator, exe, template, fresh])
        same = g.returncode == 0 and strip_date(open(fresh).read()) == strip_date(open(page).read())
        c.check("the built page is up to date with the executable's --help", same, g.stderr.strip())
        c.check("every --help is in the layout the generator reads (no warning)", g.stderr.strip() == "",
                g.stderr.strip())


def strip_date(roff):
    return re.sub(r'^\.TH MODLENS 1 "[^"]*"', ".TH MODLENS 1", roff, flags=re.M)


def check_examples(c, exe, names, examples, root):
    lines = []
    joined = normal(examples).replace("\\\n", " ")
    for raw in joined.splitlines():
        if raw.strip().startswith("modlens "):
            lines.append(words(raw))
    c.check("EXAMPLES shows commands", len(lines) >= 5, "%d" % len(lines))
    helps = {n: helpdoc.help_text(exe, n) for n in names}
    with tempfile.TemporaryDirectory() as d:
        for sub in ("captures", "profiles"):
            os.symlink(os.path.join(root, sub), os.path.join(d, sub))
        shutil.copy(os.path.join(root, "captures", "receiver-1khz.wav"), os.path.join(d, "before.wav"))
        shutil.copy(os.path.join(root, "captures", "receiver-1khz.wav"), os.path.join(d, "after.wav"))
        for line in lines:
            args = shlex.split(line)
            cmd = args[1]
            if not c.check("example %r: %s is a command" % (line[:40], cmd), cmd in names):
                continue
            # the options of cmd, and of the commands its help names ('as for', 'every option of')
            known = set(helpdoc.options(helps[cmd], names))
            for other in re.findall(r"'modlens ([a-z][a-z0-9-]*)", helps[cmd]):
                if other in helps:
                    known |= set(helpdoc.options(helps[other], names))
            used = [a.split("=")[0] for a in args[2:] if a.startswith("--")]
            bad = [o for o in used if o not in known]
            c.check("example %r: its options belong to %s" % (line[:50], cmd), not bad, "unknown %s" % bad)
            if cmd in ("measure", "tone", "compare") and "--device" not in used and "--play" not in used:
                r = helpdoc.run([exe] + args[1:], cwd=d)
                c.check("example %r runs (exit 0 or 1)" % line[:60], r.returncode in (0, 1),
                        "rc %d: %s" % (r.returncode, r.stderr.strip()[:200]))
        if os.path.exists(os.path.join(d, "tx.json")):
            try:
                json.load(open(os.path.join(d, "tx.json")))
                ok = True
            except ValueError:
                ok = False
            c.check("the JSON example wrote a JSON report", ok)


def generator_rules(c, generator, template):
    fake = helpdoc.FAKE_MODLENS
    with tempfile.TemporaryDirectory() as d:
        env = dict(os.environ, SOURCE_DATE_EPOCH="86400")
        out1, out2 = os.path.join(d, "a.1"), os.path.join(d, "b.1")
        r1 = helpdoc.run([sys.executable, generator, fake, template, out1], env=env)
        r2 = helpdoc.run([sys.executable, generator, fake, template, out2], env=env)
        if not c.check("fake: the generator runs", r1.returncode == 0 and r2.returncode == 0, r1.stderr.strip()):
            return
        roff = open(out1).read()
        c.check("fake: SOURCE_DATE_EPOCH gives the same page twice, dated 1970-01-02",
                roff == open(out2).read() and '.TH MODLENS 1 "1970-01-02" "modlens 9.8.7"' in roff)
        g = helpdoc.run(["groff", "-man", "-Tutf8", "-ww", "-z", out1])
        c.check("fake: groff -ww renders the page without a warning", g.returncode == 0 and not g.stderr.strip(),
                g.stderr.strip()[:300])
        text = normal(render(out1).stdout)
        sec = sections(text)
        c.check("fake: a section for each command, the new one included",
                all("modlens " + n in sec for n in ("alpha", "beta", "gamma", "delta")), "%s" % list(sec))
        c.check("fake: gamma's options rendered", all(has_option(sec.get("modlens gamma", ""), o)
                                                       for o in ("--quick", "--step", "--zap", "--device", "--mode")))
        c.check("fake: a term list over two lines is one entry",
                re.search(r"^\.TP\n.*list\\-a.*list\\-b.*list\\-c.*\nthree switches", roff, re.M) is not None)
        c.check("fake: a description's second line continues it",
                re.search(r"need a second line, which mentions \\fB\\-\\-flag\\fR in passing", roff) is not None)
        c.check("fake: a literal value list in bold, a metavar in italics",
                "\\fB\\-\\-mode\\fR \\fBfast\\fR|\\fBslow\\fR|\\fBexact\\fR" in roff
                and "\\fB\\-\\-count\\fR \\fIN\\fR" in roff)
        c.check("fake: a negative number set with a minus sign", "default \\-12" in roff)
        c.check("fake: a character outside ASCII as a glyph escape, rendered",
                "\\[u00B1]" in roff and "-12 \u00b1 0.5" in text, "")
        c.check("fake: no warning on a help in the layout", r1.stderr.strip() == "", r1.stderr.strip())
        c.check("fake: the safety paragraph once (under SAFETY), not per command",
                roff.count("proper RF sampler or attenuator.") == 1 and "proper RF sampler" in sec.get("SAFETY", ""))
        c.check("fake: EXIT STATUS lists alpha and beta, not gamma",
                "modlens alpha" in sec.get("EXIT STATUS", "") and "modlens beta" in sec.get("EXIT STATUS", "")
                and "modlens gamma" not in sec.get("EXIT STATUS", ""))

        # a help out of the layout: a warning naming it, the page still written
        out4 = os.path.join(d, "d.1")
        r = helpdoc.run([sys.executable, generator, fake, template, out4], env=dict(env, FAKE_MODLENS_ODD="1"))
        c.check("fake gamma without its usage line: exit 0, one warning naming gamma, the page written with it",
                r.returncode == 0 and r.stderr.strip().splitlines() == [
                    "gen-manpage: warning: gamma: --help does not begin with 'usage: '"]
                and os.path.exists(out4) and "--quick" in normal(render(out4).stdout),
                "rc %d, %r" % (r.returncode, r.stderr))

        # failures: one line, exit 1, no page
        out3 = os.path.join(d, "c.1")
        r = helpdoc.run([sys.executable, generator, fake, template, out3], env=dict(env, FAKE_MODLENS_BROKEN="1"))
        c.check("fake, failing --help: exit 1, one line 'gen-manpage: ...', no page",
                r.returncode == 1 and len(r.stderr.strip().splitlines()) == 1
                and r.stderr.startswith("gen-manpage: ") and not os.path.exists(out3)
                and not os.path.exists(out3 + ".tmp"), "rc %d, %r" % (r.returncode, r.stderr))
        bad_t = os.path.join(d, "bad.in")
        with open(bad_t, "w") as f:
            f.write(open(template).read().replace("@COMMANDS@", ""))
        r = helpdoc.run([sys.executable, generator, fake, bad_t, out3], env=env)
        c.check("a template without @COMMANDS@: exit 1, one line naming it, no page",
                r.returncode == 1 and "@COMMANDS@" in r.stderr and len(r.stderr.strip().splitlines()) == 1
                and not os.path.exists(out3), "rc %d, %r" % (r.returncode, r.stderr))


def main():
    exe, page, template, generator, root = [os.path.abspath(a) for a in sys.argv[1:6]]
    c = Checker("test_manpage")
    built_page(c, exe, page, template, generator, root)
    generator_rules(c, generator, template)
    c.finish()


if __name__ == "__main__":
    main()
