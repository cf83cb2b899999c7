"""Shared helpers of the tests of the manual page and the bash completion (standard library only).

The tests read the options from `modlens COMMAND --help` themselves, with rules of their own that
are deliberately simpler than the completion's: an option of a command is every `--name` in its
help text that is not inside a quoted reference to a command ('modlens tone --play', 'live').
"""
import os
import re
import shlex
import subprocess
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
FAKE_MODLENS = os.path.join(HERE, "fake_modlens.py")

OPTION = re.compile(r"(?<![\w-])--[a-z0-9][a-z0-9-]*")
# a quoted command reference: 'modlens ...', or 'NAME' / 'NAME --x' with NAME a command
QUOTED = re.compile(r"(?<![\w])'([^'\n]*)'(?![A-Za-z])")


def run(args, **kw):
    return subprocess.run(args, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                          timeout=120, **kw)


def help_text(exe, cmd=None):
    p = run([exe] + ([cmd] if cmd else []) + ["--help"])
    if p.returncode != 0:
        raise RuntimeError("%s %s --help: exit %d" % (exe, cmd or "", p.returncode))
    return p.stdout


def commands(exe):
    """The commands listed under 'commands:' in `modlens --help`."""
    names, inside = [], False
    for line in help_text(exe).splitlines():
        if line.strip() == "commands:":
            inside = True
        elif not line.strip():
            inside = False
        elif inside:
            names.append(line.split()[0])
    return names


def strip_references(text, command_names):
    """The text without quoted references to commands."""
    flat = " ".join(text.split("\n"))

    def repl(m):
        inner = m.group(1).strip()
        first = inner.split()[0] if inner.split() else ""
        return " " if first == "modlens" or first in command_names else m.group(0)
    return QUOTED.sub(repl, flat)


def options(text, command_names):
    """Every --name of a help text outside quoted references to commands, in order, once."""
    seen = []
    for o in OPTION.findall(strip_references(text, command_names)):
        if o not in seen:
            seen.append(o)
    return seen


def value_lists(text, command_names):
    """{option: [values]} for every '--option a|b|c' in a help text."""
    out = {}
    for m in re.finditer(r"(?<![\w-])(--[a-z0-9][a-z0-9-]*)[ =]([a-z0-9][a-z0-9.+-]*(?:\|[a-z0-9][a-z0-9.+-]*)+)"
                         r"(?![\w|-])", strip_references(text, command_names)):
        out.setdefault(m.group(1), m.group(2).split("|"))
    return out


def metavar_options(text, command_names):
    """{option: metavar} for every '--option METAVAR' (upper case) in a help text."""
    out = {}
    for m in re.finditer(r"(?<![\w-])(--[a-z0-9][a-z0-9-]*)[ =]([A-Z][A-Z0-9_]*(?:\.[a-z0-9]+)?)(?![\w])",
                         strip_references(text, command_names)):
        out.setdefault(m.group(1), m.group(2))
    return out


class Completer:
    """Drives the bash completion non-interactively: one bash process sources the script, then
    each query sets COMP_WORDS/COMP_CWORD and calls the completion function."""

    def __init__(self, script, exe, cwd=None, env=None, nounset=True):
        self.script, self.exe, self.cwd, self.env, self.nounset = script, exe, cwd, env, nounset

    def batch(self, queries, prelude=""):
        """queries: lists of words after the executable, the last one being completed.
        Returns (list of candidate lists, bash's stderr)."""
        lines = ["set -u" if self.nounset else "", "source %s" % shlex.quote(self.script), prelude,
                 "spec=$(complete -p modlens 2>&1); echo \"@@spec $spec\""]
        for q in queries:
            words = [self.exe] + list(q)
            lines.append("COMP_WORDS=(%s)" % " ".join(shlex.quote(w) for w in words))
            lines.append("COMP_CWORD=%d" % (len(words) - 1))
            lines.append("COMP_LINE=%s; COMP_POINT=${#COMP_LINE}" % shlex.quote(" ".join(words)))
            lines.append("COMPREPLY=(); fn=${spec#*-F }; fn=${fn%% *}")
            lines.append('"$fn" modlens "${COMP_WORDS[COMP_CWORD]}" "${COMP_WORDS[COMP_CWORD-1]}"')
            lines.append("echo @@begin; printf '%s\\n' \"${COMPREPLY[@]}\"; echo @@end")
        # the script goes in a file: as one -c argument it can pass the kernel's 128 KiB limit
        with tempfile.NamedTemporaryFile("w", suffix=".sh", delete=False) as f:
            f.write("\n".join(lines) + "\n")
        try:
            p = run(["bash", "--norc", "--noprofile", f.name], cwd=self.cwd, stdin=subprocess.DEVNULL,
                    env=self.env if self.env is not None else dict(os.environ))
        finally:
            os.unlink(f.name)
        results, cur, spec = [], None, None
        for line in p.stdout.splitlines():
            if line.startswith("@@spec "):
                spec = line[len("@@spec "):]
            elif line == "@@begin":
                cur = []
            elif line == "@@end":
                results.append([c for c in cur if c])
                cur = None
            elif cur is not None:
                cur.append(line)
        self.spec = spec
        if len(results) != len(queries):
            raise RuntimeError("bash gave %d answers to %d queries: %s" % (len(results), len(queries),
                                                                           p.stderr.strip()))
        return results, p.stderr
