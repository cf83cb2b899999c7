#!/usr/bin/python3
"""A stand-in for modlens that only answers --help and --version, with help texts laid out as
DEVELOPERS.md ("The manual page and the completion read --help") allows, including a command
the real program does not have. The tests of the manual page generator and of the bash completion
run it to check their rules on a fixed text. FAKE_MODLENS_LOG names a file that gets one line per
call; FAKE_MODLENS_BROKEN=1 makes every call fail; FAKE_MODLENS_ODD=1 drops gamma's usage line."""
import os
import sys

SAFETY = """Safety: never connect a sound card directly to a transmitter's output or antenna line. Use a
proper RF sampler or attenuator."""

MAIN = """usage: modlens COMMAND [options]
       modlens --help | --version

Does test things.

commands:
  alpha FILE     analyse a file
  beta           capture, then analyse as alpha does
  gamma          a command added later
  delta A B      compare two things

options:
  --help         this summary
  --version      the version

'modlens COMMAND --help' describes each command.

""" + SAFETY + "\n"

HELP = {
    "alpha": """usage: modlens alpha [options] FILE

Analyses FILE; alpha's figures are described in 'modlens gamma --help'. Give a device to 'beta'
or 'gamma --zap' by name.

input:
  --mode fast|slow|exact   how to analyse (default fast)
  --count N                how many, 1..9 (default 1); a description long enough to
                           need a second line, which mentions --flag in passing
  --in FILE.wav            another input
  --flag                   a switch
  --list-a, --list-b,
  --list-c   three switches named on two lines
output:
  --out=FILE               where the report goes
  --dir DIR                a folder
  --level DBFS             a level, default -12 ± 0.5

Exit status: 0 fine, 1 not fine, 2 usage error.

""" + SAFETY + "\n",
    "beta": """usage: modlens beta [capture options] [analysis options]

Captures, then analyses as 'modlens alpha' does.

capture:
  --device NAME|INDEX      input device
  --play-tone FREQ[,LEVEL]  play a tone
analysis: every option of 'modlens alpha' except FILE (--mode, --count, ...).

Exit status: 0 fine, 2 usage or device error.

""" + SAFETY + "\n",
    "gamma": """usage: modlens gamma [--quick] [--step F,L,S]

A command the generator has never seen.

  --quick                  fast
  --step F,L,S             a step (repeatable)
  --zap                    zap
  --device, --mode   as for 'modlens beta' and 'modlens alpha'

""" + SAFETY + "\n",
    "delta": """usage: modlens delta [options] A B

Compares A and B.

  --tolerance X            a tolerance
  alpha's analysis options (see 'modlens alpha --help') apply to both.

""" + SAFETY + "\n",
}


def main(argv):
    log = os.environ.get("FAKE_MODLENS_LOG")
    if log:
        with open(log, "a") as f:
            f.write(" ".join(argv[1:]) + "\n")
    if os.environ.get("FAKE_MODLENS_BROKEN") == "1":
        sys.stderr.write("modlens: broken\n")
        return 3
    args = argv[1:]
    if args == ["--version"]:
        print("modlens 9.8.7")
        return 0
    if args in (["--help"], ["-h"], ["help"]):
        sys.stdout.write(MAIN)
        return 0
    if len(args) == 2 and args[1] == "--help" and args[0] in HELP:
        text = HELP[args[0]]
        if args[0] == "gamma" and os.environ.get("FAKE_MODLENS_ODD") == "1":
            text = text.split("\n", 2)[2]
        sys.stdout.write(text)
        return 0
    sys.stderr.write("modlens: this stand-in only answers --help and --version\n")
    return 2


if __name__ == "__main__":
    sys.exit(main(sys.argv))
