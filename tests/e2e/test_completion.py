"""The bash completion (completion/modlens), driven non-interactively: the script is sourced in
bash and its completion function called with COMP_WORDS/COMP_CWORD set, as bash does on TAB.

With the real executable: every command of `modlens --help` completes as the first word; every
option of every command's --help (every --name outside quoted references to other commands,
read by this test's own rules in helpdoc.py) is offered for that command, also from a prefix;
every '--option a|b|c' completes exactly a, b and c (also typed as --option=, with and without
'=' breaking words); an option with a FILE metavar completes file names; one with another
metavar offers nothing (the user types a number); a file argument completes file names.
With tests/e2e/fake_modlens.py (fixed help texts, one command the real program does not have):
the completion's documented rules -- quoted references, 'every option of', 'as for', folders,
--opt=FILE --, a command added later -- and that each help text is read once per shell session.

usage: test_completion.py MODLENS COMPLETION_SCRIPT
"""
import os
import sys
import tempfile

from e2e_common import Checker
import helpdoc


def real_program(c, exe, script):
    names = helpdoc.commands(exe)
    c.check("modlens --help lists commands", len(names) >= 5, "%s" % names)
    with tempfile.TemporaryDirectory() as d:
        for f in ("alpha.wav", "alpha.ini", "beta.csv"):
            open(os.path.join(d, f), "w").close()
        os.mkdir(os.path.join(d, "alpha-dir"))
        comp = helpdoc.Completer(script, exe, cwd=d)

        queries, what = [[""], ["-"], ["--"]], ["first word", "first word -", "first word --"]
        for cmd in names:
            text = helpdoc.help_text(exe, cmd)
            opts = helpdoc.options(text, names)
            queries.append([cmd, "--"])
            what.append(("all", cmd, opts))
            for o in opts:
                queries.append([cmd, o[:4]])
                what.append(("prefix", cmd, o))
            for o, values in helpdoc.value_lists(text, names).items():
                queries += [[cmd, o, ""], [cmd, o + "=", ], [cmd, o, "=", ""], [cmd, o, values[0][:1]]]
                what += [("values", cmd, o, values, ""), ("values=", cmd, o, values, o + "="),
                         ("values = ", cmd, o, values, ""), ("values prefix", cmd, o, values, "")]
            lists = helpdoc.value_lists(text, names)
            for o, meta in helpdoc.metavar_options(text, names).items():
                if o in lists:
                    continue  # shown with its values elsewhere: those are offered
                if "FILE" in meta:
                    queries.append([cmd, o, "alp"])
                    what.append(("file", cmd, o))
                else:
                    queries.append([cmd, o, ""])
                    what.append(("metavar", cmd, o, meta))
        results, err = comp.batch(queries)
        c.check("the script registers a function for modlens", (comp.spec or "").startswith("complete -F "),
                repr(comp.spec))
        c.check("no error output from bash (set -u)", err.strip() == "", err.strip()[:300])

        first = set(results[0])
        c.check("first word: every command, --help and --version",
                first >= set(names) | {"--help", "--version"}, "got %s" % sorted(first))
        c.check("first word '-': --help and --version only", set(results[1]) == {"--help", "--version"},
                "got %s" % results[1])
        c.check("first word '--': --help and --version only", set(results[2]) == {"--help", "--version"},
                "got %s" % results[2])
        for w, r in zip(what[3:], results[3:]):
            kind, cmd = w[0], w[1]
            if kind == "all":
                missing = [o for o in w[2] if o not in r]
                c.check("%s: every option of its --help offered (%d)" % (cmd, len(w[2])), not missing and w[2],
                        "missing %s" % missing)
                c.check("%s: offers only options" % cmd, all(x.startswith("--") for x in r), "%s" % r)
            elif kind == "prefix":
                c.check("%s %s...: %s offered" % (cmd, w[2][:4], w[2]), w[2] in r, "got %s" % r)
            elif kind.startswith("values"):
                o, values, lead = w[2], w[3], w[4]
                want = [lead + v for v in values]
                if kind == "values prefix":
                    want = [v for v in values if v.startswith(values[0][:1])]
                c.check("%s %s (%s): exactly %s" % (cmd, o, kind, "|".join(values)), sorted(r) == sorted(want),
                        "got %s" % r)
            elif kind == "file":
                c.check("%s %s alp: file names" % (cmd, w[2]),
                        {"alpha.wav", "alpha.ini", "alpha-dir"} <= set(r) and not any(x.startswith("-") for x in r),
                        "got %s" % r)
            elif kind == "metavar":
                c.check("%s %s %s: nothing offered (a value to type)" % (cmd, w[2], w[3]), r == [], "got %s" % r)

        # file arguments: measure FILE takes a file name where no option is being typed
        q = [["measure", "alp"], ["measure", "--swap-iq", "b"], ["nosuchcommand", "--"]]
        r, _ = comp.batch(q)
        c.check("measure alp: file names", {"alpha.wav", "alpha.ini", "alpha-dir"} <= set(r[0]), "got %s" % r[0])
        c.check("measure --swap-iq b: file names after a switch", r[1] == ["beta.csv"], "got %s" % r[1])
        c.check("an unknown command completes nothing", r[2] == [], "got %s" % r[2])

        # live analyses as measure does: its help says so, so it offers measure's options
        live_help = helpdoc.help_text(exe, "live") if "live" in names else ""
        if "every option of 'modlens measure'" in " ".join(live_help.split()):
            m_opts = helpdoc.options(helpdoc.help_text(exe, "measure"), names)
            r, _ = comp.batch([["live", "--"]])
            missing = [o for o in m_opts if o not in r[0]]
            c.check("live: measure's options offered too (its help: 'every option of')", not missing,
                    "missing %s" % missing)


def fake_program(c, script):
    with tempfile.TemporaryDirectory() as d:
        log = os.path.join(d, "calls.log")
        for f in ("one.wav", "two.wav"):
            open(os.path.join(d, f), "w").close()
        os.mkdir(os.path.join(d, "outdir"))
        env = dict(os.environ, FAKE_MODLENS_LOG=log)
        comp = helpdoc.Completer(script, helpdoc.FAKE_MODLENS, cwd=d, env=env)
        q = [
            [""],                                   # 0 commands, a new one included
            ["alpha", "--"],                        # 1
            ["beta", "--"],                         # 2
            ["gamma", "--"],                        # 3
            ["delta", "--"],                        # 4
            ["alpha", "--mode", ""],                # 5
            ["alpha", "--count", ""],               # 6
            ["alpha", "--in", "o"],                 # 7
            ["alpha", "--out=o"],                   # 8
            ["alpha", "--dir", ""],                 # 9
            ["alpha", "--flag", "o"],               # 10 a switch: the next word is the file argument
            ["beta", "o"],                          # 11 beta takes no file: options
            ["beta", "--mode", ""],                 # 12 kind taken over with the options
            ["gamma", "--mode", "s"],               # 13 'as for': kind from alpha
            ["gamma", "--device", ""],              # 14 'as for': a value (from beta)
            ["delta", "o"],                         # 15 A B: files
            ["alpha", "--"],                        # 16 again: from the cache
        ]
        r, err = comp.batch(q)
        c.check("fake: no error output from bash", err.strip() == "", err.strip()[:300])
        c.check("fake: first word lists the commands, including one added later",
                sorted(r[0]) == sorted(["alpha", "beta", "gamma", "delta", "--help", "--version"]), "%s" % r[0])
        alpha = ["--mode", "--count", "--in", "--flag", "--list-a", "--list-b", "--list-c", "--out", "--dir",
                 "--level"]
        c.check("fake alpha: its options, not --zap of a quoted reference", set(r[1]) == set(alpha + ["--help"]),
                "got %s" % r[1])
        c.check("fake beta: its own options and alpha's ('every option of')",
                set(r[2]) == set(alpha + ["--device", "--play-tone", "--help"]), "got %s" % r[2])
        c.check("fake gamma: only what it lists ('as for' takes no options over)",
                set(r[3]) == {"--quick", "--step", "--zap", "--device", "--mode", "--help"}, "got %s" % r[3])
        c.check("fake delta: its own and alpha's ('options (see ...)')",
                set(r[4]) == set(alpha + ["--tolerance", "--help"]), "got %s" % r[4])
        c.check("fake --mode: fast slow exact", r[5] == ["fast", "slow", "exact"], "got %s" % r[5])
        c.check("fake --count N: nothing", r[6] == [], "got %s" % r[6])
        c.check("fake --in FILE.wav o: files", sorted(r[7]) == ["one.wav", "outdir"], "got %s" % r[7])
        c.check("fake --out=o (FILE): files after the '='", sorted(r[8]) == ["--out=one.wav", "--out=outdir"],
                "got %s" % r[8])
        c.check("fake --dir DIR: folders only", r[9] == ["outdir"], "got %s" % r[9])
        c.check("fake alpha --flag o: the file argument", sorted(r[10]) == ["one.wav", "outdir"], "got %s" % r[10])
        c.check("fake beta o: no file argument, so nothing starting with o", r[11] == [], "got %s" % r[11])
        c.check("fake beta --mode: the values of alpha's --mode", r[12] == ["fast", "slow", "exact"],
                "got %s" % r[12])
        c.check("fake gamma --mode s: slow ('as for 'modlens alpha'')", r[13] == ["slow"], "got %s" % r[13])
        c.check("fake gamma --device: nothing (NAME|INDEX in beta)", r[14] == [], "got %s" % r[14])
        c.check("fake delta o: files (A B)", sorted(r[15]) == ["one.wav", "outdir"], "got %s" % r[15])
        c.check("fake: the second completion of a command gives the same", r[16] == r[1], "got %s" % r[16])
        calls = open(log).read().splitlines()
        dup = sorted({x for x in calls if calls.count(x) > 1})
        c.check("fake: each help text read once per shell session", not dup and "alpha --help" in calls,
                "calls %s" % calls)

        # a program that fails: no candidates, no error messages
        env_b = dict(env, FAKE_MODLENS_BROKEN="1")
        r, err = helpdoc.Completer(script, helpdoc.FAKE_MODLENS, cwd=d, env=env_b).batch([[""], ["alpha", "--"]])
        c.check("fake, broken: nothing offered and nothing printed", r == [[], []] and err.strip() == "",
                "got %s, stderr %r" % (r, err.strip()[:200]))
        # a name that is no executable
        r, err = helpdoc.Completer(script, os.path.join(d, "missing"), cwd=d).batch([[""]])
        c.check("a missing executable: nothing offered and nothing printed", r == [[]] and err.strip() == "",
                "got %s, stderr %r" % (r, err.strip()[:200]))


def main():
    exe, script = os.path.abspath(sys.argv[1]), os.path.abspath(sys.argv[2])
    c = Checker("test_completion")
    real_program(c, exe, script)
    fake_program(c, script)
    c.finish()


if __name__ == "__main__":
    main()
