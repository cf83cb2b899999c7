"""`meson install --destdir D` installs the executable, the manual page and the bash completion
in their usual places under the prefix (bin/, share/man/man1/, share/bash-completion/completions/
with the default directories), and each works from there: the executable runs, `man -M` finds
the page by name and renders it without a warning, and the installed completion, sourced in bash,
completes commands and options from the installed executable, also when found on PATH.

usage: test_install.py MESON BUILD_ROOT
"""
import filecmp
import json
import os
import sys
import tempfile

from e2e_common import Checker
import helpdoc


def main():
    meson, build = sys.argv[1], os.path.abspath(sys.argv[2])
    c = Checker("test_install")
    opts = {o["name"]: o["value"] for o in
            json.loads(helpdoc.run([meson, "introspect", build, "--buildoptions"]).stdout)}
    prefix = opts["prefix"]
    comp_dir = opts.get("bash_completions_dir") or os.path.join(opts["datadir"], "bash-completion", "completions")
    rel = {"exe": os.path.join(opts["bindir"], "modlens"),
           "page": os.path.join(opts["mandir"], "man1", "modlens.1"),
           "completion": os.path.join(comp_dir, "modlens")}
    if opts["bindir"] == "bin" and opts["mandir"] == "share/man" and opts["datadir"] == "share" \
            and not opts.get("bash_completions_dir"):
        c.check("default directories: the usual places",
                rel == {"exe": "bin/modlens", "page": "share/man/man1/modlens.1",
                        "completion": "share/bash-completion/completions/modlens"}, "%s" % rel)

    with tempfile.TemporaryDirectory() as d:
        r = helpdoc.run([meson, "install", "-C", build, "--no-rebuild", "--quiet", "--destdir", d])
        if not c.check("meson install --destdir: exit 0", r.returncode == 0, r.stderr.strip()[-500:]):
            c.finish()
        root = os.path.join(d, prefix.lstrip("/"))
        path = {k: os.path.join(root, v) for k, v in rel.items()}
        for k, p in path.items():
            c.check("installed %s: %s" % (k, os.path.relpath(p, d)), os.path.isfile(p))
        c.check("the executable is executable", os.access(path["exe"], os.X_OK))
        v = helpdoc.run([path["exe"], "--version"])
        c.check("the installed executable runs: modlens --version", v.returncode == 0 and v.stdout.startswith("modlens "),
                v.stdout.strip() + v.stderr.strip())
        c.check("the installed page is the built one",
                filecmp.cmp(path["page"], os.path.join(build, "docs", "modlens.1"), shallow=False))

        env = dict(os.environ, MANWIDTH="80")
        env.pop("MANPATH", None)
        m = helpdoc.run(["man", "--warnings", "-M", os.path.join(root, opts["mandir"]), "modlens"], env=env)
        c.check("man -M PREFIX/%s modlens: found by name, rendered without a warning" % opts["mandir"],
                m.returncode == 0 and not m.stderr.strip() and "modlens measure" in m.stdout,
                "rc %d, %r" % (m.returncode, m.stderr.strip()[:300]))

        names = helpdoc.commands(path["exe"])
        m_opts = helpdoc.options(helpdoc.help_text(path["exe"], "measure"), names)
        comp = helpdoc.Completer(path["completion"], path["exe"], cwd=d)
        res, err = comp.batch([["me"], ["measure", "--"]])
        c.check("the installed completion completes from the installed executable",
                "measure" in res[0] and m_opts and set(m_opts) <= set(res[1]) and not err.strip(),
                "got %s %r" % (res, err[:200]))
        env_p = dict(os.environ, PATH=os.path.dirname(path["exe"]) + os.pathsep + os.environ.get("PATH", ""))
        comp = helpdoc.Completer(path["completion"], "modlens", cwd=d, env=env_p)
        res, err = comp.batch([[""]])
        c.check("... and from 'modlens' found on PATH", set(names) <= set(res[0]) and not err.strip(),
                "got %s" % res)
    c.finish()


if __name__ == "__main__":
    main()
