"""The settings file: applied, overridden on the command line, ignored with --no-settings, refused
when broken.

Usage: /usr/bin/python3 test_settings.py /path/to/modlens

Each run gets its own configuration folder through XDG_CONFIG_HOME (the XDG base-directory rule:
$XDG_CONFIG_HOME/modlens/settings.ini, else $HOME/.config/modlens/settings.ini; a relative
XDG_CONFIG_HOME is ignored). The expected values are the settings themselves: a full scale of
+12 dBu adds 12 dB to the dBFS level (docs/references.md 14), mains 60 is reported as given, the
limits profile adds its check, the card profile adds the card_limited list.
"""
import os
import sys

import numpy as np

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_common as E  # noqa: E402

FS = 48000


def env_for(xdg, home=None):
    env = dict(os.environ)
    env.pop("XDG_CONFIG_HOME", None)
    if xdg is not None:
        env["XDG_CONFIG_HOME"] = xdg
    if home is not None:
        env["HOME"] = home
    return env


def write_settings(folder, text):
    os.makedirs(os.path.join(folder, "modlens"), exist_ok=True)
    path = os.path.join(folder, "modlens", "settings.ini")
    with open(path, "w") as f:
        f.write(text)
    return path


def measure(exe, args, env):
    import json
    rc, out, err = E.run_cmd(exe, ["measure", "--format", "json"] + args, env=env)
    try:
        rep = json.loads(out)
    except ValueError:
        rep = None
    return rc, rep, err


def applied(ck, exe, xdg, env):
    rc, rep, err = measure(exe, ["tone.wav"], env)
    ck.check("settings applied: exit 0", rc == 0 and rep is not None, err.strip())
    if not rep:
        return
    settings = E.get(rep, "settings.in_force")
    path = os.path.join(xdg, "modlens", "settings.ini")
    ck.check("the report says which settings were applied",
             settings.startswith("settings %s: limits, card, mains 60 Hz, calibration" % path), settings)
    ck.close("full_scale_dbu = 12: dBu = dBFS + 12", E.get(rep, "audio.fundamental_dbu"),
             E.get(rep, "audio.fundamental_dbfs") + 12, 0.011)
    ck.check("mains = 60 applied", E.get(rep, "hum.mains_hz") == 60, repr(E.get(rep, "hum.mains_hz")))
    ck.check("limits = lim.ini (beside the settings) applied",
             [c["metric"] for c in rep.get("checks", [])] == ["audio.thd_pct"], repr(rep.get("checks")))
    ck.check("card = card.json (beside the settings) applied", "card_limited" in rep and "card profile" in settings,
             repr(rep.keys()))


def overridden(ck, exe, env):
    rc, rep, err = measure(exe, ["--full-scale-dbu", "18", "--mains", "50", "tone.wav"], env)
    ck.check("overridden: exit 0", rc == 0 and rep is not None, err.strip())
    if rep:
        settings = E.get(rep, "settings.in_force")
        ck.close("--full-scale-dbu 18 wins over the settings' 12", E.get(rep, "audio.fundamental_dbu"),
                 E.get(rep, "audio.fundamental_dbfs") + 18, 0.011)
        ck.check("--mains 50 wins", E.get(rep, "hum.mains_hz") == 50, repr(E.get(rep, "hum.mains_hz")))
        ck.check("the report names what the command line overrode",
                 "(from the command line instead: mains, calibration)" in settings and "--full-scale-dbu" in settings,
                 settings)
    rc, rep, err = measure(exe, ["--limits", "other.ini", "tone.wav"], env)
    if rep:
        ck.check("--limits wins", [c["metric"] for c in rep.get("checks", [])] == ["audio.snr_db"],
                 repr(rep.get("checks")))
    rc, rep, err = measure(exe, ["--no-settings", "tone.wav"], env)
    ck.check("--no-settings: exit 0", rc == 0 and rep is not None, err.strip())
    if rep:
        ck.check("--no-settings: nothing of the file applies",
                 not E.has(rep, "audio.fundamental_dbu") and not rep.get("checks") and "card_limited" not in rep
                 and not E.has(rep, "settings.in_force"), repr({k: rep[k] for k in rep if k in ("settings", "checks")}))


def fallbacks(ck, exe, tmp):
    home = os.path.join(tmp, "home")
    write_settings(os.path.join(home, ".config"), "full_scale_dbu = 6\n")
    for name, env in [("HOME/.config without XDG_CONFIG_HOME", env_for(None, home)),
                      ("a relative XDG_CONFIG_HOME is ignored", env_for("relative/dir", home))]:
        rc, rep, err = measure(exe, ["tone.wav"], env)
        ck.check(name, rc == 0 and rep is not None and abs(E.get(rep, "audio.fundamental_dbu")
                                                            - E.get(rep, "audio.fundamental_dbfs") - 6) < 0.011,
                 err.strip())
    rc, rep, err = measure(exe, ["tone.wav"], env_for(os.path.join(tmp, "empty")))
    ck.check("no settings file: nothing applied", rc == 0 and rep is not None
             and not E.has(rep, "settings.in_force"), err.strip())


def broken(ck, exe, tmp):
    cases = [("unknown key", "colour = red\n", "line 1: key 'colour': unknown"),
             ("mains 55", "; c\n\nmains = 55\n", "line 3: key 'mains': '55' is not 50 or 60"),
             ("a key twice", "mains = 50\nmains = 60\n", "line 2: key 'mains': given twice"),
             ("calibration and full_scale_dbu", "full_scale_dbu = 10\ncalibration = c.json\n", "not both"),
             ("full scale out of range", "full_scale_dbu = 100\n", "out of range"),
             ("a section", "[modlens]\n", "no sections"),
             ("not key = value", "mains\n", "is not a 'key = value' line"),
             ("a missing card profile", "card = nosuch.json\n", "nosuch.json")]
    for i, (name, text, want) in enumerate(cases):
        xdg = os.path.join(tmp, "bad%d" % i)
        path = write_settings(xdg, text)
        env = env_for(xdg)
        rc, out, err = E.run_cmd(exe, ["measure", "tone.wav"], env=env)
        ck.check("settings with %s: exit 2, one line naming it" % name,
                 rc == 2 and len(err.strip().splitlines()) == 1 and want in err
                 and (path in err or "nosuch" in want), err.strip())
        rc, out, err = E.run_cmd(exe, ["measure", "--no-settings", "tone.wav"], env=env)
        ck.check("... and --no-settings ignores it", rc == 0, err.strip())
    xdg = os.path.join(tmp, "dir")
    os.makedirs(os.path.join(xdg, "modlens", "settings.ini"))
    rc, out, err = E.run_cmd(exe, ["measure", "tone.wav"], env=env_for(xdg))
    ck.check("a folder named settings.ini: exit 2", rc == 2 and "directory" in err, err.strip())


def other_commands(ck, exe, env, xdg):
    rc, out, err = E.run_cmd(exe, ["log", "--out", "log.csv", "--kind", "audio", "tone.wav"], env=env)
    ck.check("log takes the settings' calibration", rc == 0 and "rms_dbu" in E.log_lines("log.csv")[0],
             err.strip())
    rc, out, err = E.run_cmd(exe, ["log", "--no-settings", "--out", "log2.csv", "--kind", "audio", "tone.wav"],
                             env=env)
    ck.check("log --no-settings keeps dBFS", rc == 0 and "rms_dbfs" in E.log_lines("log2.csv")[0],
             err.strip())
    write_settings(xdg, "device = nosuch-device-xyz\n")
    rc, out, err = E.run_cmd(exe, ["card", "--out", "c.json"], env=env)
    ck.check("card without FILE or --device takes the settings' device",
             rc == 2 and "nosuch-device-xyz" in err and not os.path.exists("c.json"), err.strip())
    rc, out, err = E.run_cmd(exe, ["card", "--no-settings", "--out", "c.json"], env=env)
    ck.check("card --no-settings: asks for a FILE or --device", rc == 2 and "--device" in err, err.strip())


def main():
    exe = E.modlens_path()
    ck = E.Checker("settings")
    with E.scratch() as d:
        tmp = d if isinstance(d, str) else os.getcwd()
        x = E.synth(FS, 3.0, [(997.0, 0.5, 0.0), (60.0, 1e-3, 0.0), (120.0, 5e-4, 0.0)], noise_rms=1e-6, seed=2)
        E.write("tone.wav", x.astype(np.float32), FS, "FLOAT")
        xdg = os.path.join(tmp, "xdg")
        folder = os.path.join(xdg, "modlens")
        os.makedirs(folder)
        rc, _, err = E.run_cmd(exe, ["tone", "--card-test", "--out", "ct.wav"])
        rc2, _, err2 = E.run_cmd(exe, ["card", "--out", os.path.join(folder, "card.json"), "ct.wav"])
        ck.check("a card profile for the settings", rc == 0 and rc2 == 0, err + err2)
        with open(os.path.join(folder, "lim.ini"), "w") as f:
            f.write("thd_pct_max = 1\n")
        with open("other.ini", "w") as f:
            f.write("snr_db_min = 10\n")
        write_settings(xdg, "; bench defaults\nmains = 60\nfull_scale_dbu = 12 ; +12 dBu at full scale\n"
                            "card = card.json\nlimits = lim.ini\n")
        env = env_for(xdg)
        applied(ck, exe, xdg, env)
        overridden(ck, exe, env)
        fallbacks(ck, exe, tmp)
        broken(ck, exe, tmp)
        other_commands(ck, exe, env, xdg)
    ck.finish()


if __name__ == "__main__":
    main()
