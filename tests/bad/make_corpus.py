#!/usr/bin/python3
"""Writes the bad-input corpus into tests/bad/files/ (deterministic: fixed seeds, no clock).

Usage: /usr/bin/python3 tests/bad/make_corpus.py [FOLDER]

The files are committed; run this only to add or change one, then commit the result. Inputs that
cannot be committed (a FIFO, a directory, an unreadable file) are made by run_corpus.py at test
time. cases.txt says what modlens must do with each file.
"""
import os
import struct
import sys

import numpy as np
import soundfile as sf

FS = 8000  # small files: 8 kHz keeps every capture a few kB


def wav_header(channels, rate, bits, nframes, fmt_tag=1, riff_size=None, data_size=None):
    """A canonical 44-byte WAV header (RIFF, fmt , data), every field overridable."""
    block = channels * bits // 8
    data = nframes * block if data_size is None else data_size
    riff = 36 + data if riff_size is None else riff_size
    return (b"RIFF" + struct.pack("<I", riff & 0xFFFFFFFF) + b"WAVE" + b"fmt " + struct.pack("<I", 16)
            + struct.pack("<HHIIHH", fmt_tag, channels & 0xFFFF, rate & 0xFFFFFFFF,
                          (rate * block) & 0xFFFFFFFF, block & 0xFFFF, bits)
            + b"data" + struct.pack("<I", data & 0xFFFFFFFF))


def tone(seconds, f=1000.0, a=0.5, rate=FS):
    t = np.arange(int(round(seconds * rate))) / rate
    return a * np.sin(2 * np.pi * f * t)


def am(seconds, fc, rate, m=0.5, fm=400.0, iq=False):
    t = np.arange(int(round(seconds * rate))) / rate
    env = 0.4 * (1 + m * np.sin(2 * np.pi * fm * t))
    if iq:
        return np.stack([env * np.cos(2 * np.pi * fc * t), env * np.sin(2 * np.pi * fc * t)], axis=1)
    return env * np.cos(2 * np.pi * fc * t)


def main():
    out = sys.argv[1] if len(sys.argv) > 1 else os.path.join(os.path.dirname(os.path.abspath(__file__)), "files")
    os.makedirs(out, exist_ok=True)

    def p(name):
        return os.path.join(out, name)

    def raw(name, data):
        with open(p(name), "wb") as f:
            f.write(data)

    good = tone(1.0)
    pcm = (np.round(good * 32767)).astype("<i2").tobytes()
    sf.write(p("good.wav"), good, FS, subtype="PCM_16")
    # headers cut short or corrupted
    raw("trunc-riff-only.wav", b"RIFF")
    raw("trunc-12.wav", wav_header(1, FS, 16, 8000)[:12])
    raw("trunc-30.wav", wav_header(1, FS, 16, 8000)[:30])
    raw("trunc-header-only.wav", wav_header(1, FS, 16, 8000))
    raw("data-cut-short.wav", wav_header(1, FS, 16, 8000) + pcm[:4000])
    raw("bad-format-tag.wav", wav_header(1, FS, 16, 8000, fmt_tag=0x7777) + pcm)
    raw("zero-channels.wav", wav_header(0, FS, 16, 8000) + pcm)
    raw("zero-rate.wav", wav_header(1, 0, 16, 8000) + pcm)
    raw("bits-zero.wav", wav_header(1, FS, 0, 8000) + pcm)
    raw("garbage.wav", bytes(np.random.default_rng(3).integers(0, 256, 4096, dtype=np.uint8)))
    raw("riff-not-wave.wav", b"RIFF" + struct.pack("<I", 100) + b"AVI " + bytes(100))
    # zero and one frame
    raw("zero-frames.wav", wav_header(1, FS, 16, 0))
    sf.write(p("one-frame.wav"), np.array([0.25]), FS, subtype="PCM_16")
    sf.write(p("short-100.wav"), tone(100 / FS), FS, subtype="PCM_16")
    # absurd channel counts
    sf.write(p("channels-100.wav"), np.zeros((400, 100)), FS, subtype="PCM_16")
    raw("channels-65535.wav", wav_header(65535, FS, 16, 1) + bytes(2 * 65535))
    # rates too low for the chosen kind
    sf.write(p("if-8k.wav"), am(1.0, 3000.0, FS), FS, subtype="PCM_16")
    sf.write(p("iq-8k.wav"), am(1.0, 1000.0, FS, iq=True), FS, subtype="PCM_16")
    sf.write(p("rate-1hz.wav"), np.zeros(300), 1, subtype="PCM_16")
    # non-finite float samples
    for name, v in (("nan.wav", np.nan), ("posinf.wav", np.inf), ("neginf.wav", -np.inf)):
        x = good.copy()
        x[777] = v
        sf.write(p(name), x, FS, subtype="FLOAT")
    x = good.copy()
    x[-1] = np.nan
    sf.write(p("nan-last.wav"), x, FS, subtype="DOUBLE")
    xq = am(1.0, 1000.0, FS, iq=True)
    xq[1000, 1] = np.nan
    sf.write(p("iq-nan-q.wav"), xq, FS, subtype="FLOAT")
    # finite float samples far beyond full scale: the if/iq pass computes in single precision
    xq = am(1.0, 1000.0, 48000, iq=True)
    xq[1500, 0] = 1e35
    sf.write(p("iq-huge.wav"), xq, 48000, subtype="FLOAT")
    sf.write(p("iq-loud.wav"), 1e20 * am(1.0, 1000.0, 48000, iq=True), 48000, subtype="FLOAT")
    # awkward but valid
    sf.write(p("silent.wav"), np.zeros(2 * FS), FS, subtype="PCM_16")
    sf.write(p("silent-stereo.wav"), np.zeros((2 * FS, 2)), FS, subtype="PCM_16")
    sf.write(p("dc-only.wav"), np.full(2 * FS, 0.25), FS, subtype="PCM_16")
    sf.write(p("square-fullscale.wav"), np.where(np.sin(2 * np.pi * 1000 * np.arange(FS) / FS + 0.1) >= 0, 1.0, -1.0),
             FS, subtype="FLOAT")
    sf.write(p("clipped.wav"), np.clip(1.5 * tone(1.0, a=1.0), -1, 1), FS, subtype="PCM_16")
    sf.write(p("beyond-fullscale.wav"), 4.0 * tone(1.0), FS, subtype="FLOAT")
    sf.write(p("tiny-level.wav"), 1e-30 * tone(1.0), FS, subtype="FLOAT")
    sf.write(p("noise-only.wav"), np.random.default_rng(5).normal(0, 0.1, FS), FS, subtype="PCM_16")
    sf.write(p("nyquist-tone.wav"), np.where(np.arange(FS) % 2 == 0, 0.5, -0.5), FS, subtype="PCM_16")
    sf.write(p("good-iq.wav"), am(1.0, 1000.0, 48000, iq=True), 48000, subtype="PCM_16")
    sf.write(p("unmodulated-iq.wav"), am(1.0, 1000.0, 48000, m=0.0, iq=True), 48000, subtype="PCM_16")
    with open(p("text.wav"), "w") as f:
        f.write("not a recording\n" * 40)

    # limits profiles with every kind of mistake
    lim = {
        "lim-unknown-key.ini": "thd_pct_max = 1\nbogus_metric_max = 3\n",
        "lim-not-number.ini": "thd_pct_max = one\n",
        "lim-nan.ini": "thd_pct_max = nan\n",
        "lim-inf.ini": "snr_db_min = inf\n",
        "lim-trailing.ini": "thd_pct_max = 1.0 %\n",
        "lim-empty-value.ini": "thd_pct_max =\n",
        "lim-repeated.ini": "thd_pct_max = 1\n[audio]\nthd_pct_max = 2\n",
        "lim-min-above-max.ini": "snr_db_min = 60\nsnr_db_max = 50\n",
        "lim-no-suffix.ini": "thd_pct = 1\n",
        "lim-syntax.ini": "[audio]\nthis line has no equals sign\n",
        "lim-bad-section.ini": "[audio\nthd_pct_max = 1\n",
        "lim-empty.ini": "; only a comment\n",
        "lim-mask-unordered.ini": "[mask]\npoints = 20000:-35, 10000:-25\n",
        "lim-mask-garbage.ini": "[mask]\npoints = 10000-25\n",
        "lim-mask-rbw-neg.ini": "[mask]\npoints = 10000:-25, 20000:-35\nrbw_hz = -5\n",
        "lim-wrong-group.ini": "[hum]\nthd_pct_max = 1\n",
        "lim-huge-number.ini": "thd_pct_max = 1e999\n",
        "lim-long-line.ini": "thd_pct_max = " + "1" * 5000 + "\n",
    }
    for name, text in lim.items():
        with open(p(name), "w") as f:
            f.write(text)
    # lines past inih's old 199-byte limit: the tail of the comment must stay a comment (it names
    # a check good.wav would fail), and a 30-point mask is one line
    lim_more = {
        "lim-long-comment.ini": "; " + "x" * 197 + " snr_db_min = 500\n[audio]\nthd_pct_max = 5\n",
        "lim-long-mask.ini": "[mask]\npoints = " + ", ".join("%d:10" % (500 * i) for i in range(30)) + "\n",
        "lim-mask-repeated.ini": "[mask]\npoints = 1000:0, 2000:-10\npoints = 1000:0\n",
        "lim-rbw-repeated.ini": "[mask]\npoints = 1000:0, 2000:-10\nrbw_hz = 300\nrbw_hz = 100\n",
        "lim-profile-repeated.ini": "[profile]\nname = a\nname = b\n[audio]\nthd_pct_max = 5\n",
        "lim-limit-1e300.ini": "thd_pct_max = 1e300\n",
        "lim-mask-offset-huge.ini": "[mask]\npoints = 0:0, 1e300:-25\n",
        "lim-name-long.ini": "[profile]\nname = " + "n" * 200 + "\n[audio]\nthd_pct_max = 5\n",
        "lim-control-bytes.ini": "thd\x1b]0;x\x07_max = 1\n",
    }
    for name, text in lim_more.items():
        with open(p(name), "w") as f:
            f.write(text)
    raw("lim-bom-crlf.ini", b"\xef\xbb\xbf[audio]\r\nthd_pct_max = 5 ; inline comment\r\n")

    # saved JSON reports for compare: one valid, and numbers that would overflow or mislead
    import json
    base = {"input": {"path": "x.wav", "kind": "audio", "kind_reason": "--kind audio", "format": "WAV 16-bit PCM",
                      "sample_rate_hz": 8000.0, "channels": 1, "channel": 1, "frames": 8000, "duration_s": 1.0,
                      "start_s": 0.0, "analysed_s": 1.0},
            "audio": {"thd_pct": 0.01, "thd_db": -80.0, "clipped_samples": 0},
            "hum": {"mains_hz": 50.0, "level_dbfs": -90.0}, "verdict": "unchecked"}

    def report(name, change=None, text=None):
        r = json.loads(json.dumps(base))
        if change:
            change(r)
        with open(p(name), "w") as f:
            f.write(text if text is not None else json.dumps(r, indent=2))

    report("rep-good.json")
    report("rep-text-thd.json", lambda r: r["audio"].__setitem__("thd_pct", "0.01"))
    report("rep-count-1e300.json", lambda r: r["audio"].__setitem__("clipped_samples", 1e300))
    report("rep-neg-count.json", lambda r: r["audio"].__setitem__("clipped_samples", -3))
    report("rep-channels-huge.json", lambda r: r["input"].__setitem__("channels", 2 ** 62))
    report("rep-frames-2p63.json", text=json.dumps(base).replace('"frames": 8000', '"frames": 9223372036854775807'))
    # impossible figures (the registry's ranges) and a lost section; JSON that is no report
    report("rep-neg-thd.json", lambda r: r["audio"].__setitem__("thd_pct", -5.0))
    report("rep-enob-40.json", lambda r: r["audio"].__setitem__("enob_bits", 40.0))
    report("rep-db-299.json", lambda r: r["audio"].__setitem__("thd_db", -299.0))
    report("rep-no-audio.json", lambda r: r.pop("audio"))
    report("rep-array.json", text="[1, 2]")
    raw("rep-bom.json", b"\xef\xbb\xbf" + json.dumps(base).encode())
    report("rep-deep.json", text="[" * 5000 + "]" * 5000)
    # a FLAC file with a header and no frames; a rate so high that 20..20000 Hz is under one bin
    # FLAC format: "fLaC", then the last metadata block (flag 0x80, type 0 STREAMINFO, 34 bytes):
    # block sizes 4096, frame sizes unknown (0), 8000 Hz, 1 channel, 16 bits, 0 samples, no MD5
    info = struct.pack(">HH", 4096, 4096) + bytes(6) + struct.pack(">Q", (FS << 44) | (0 << 41) | (15 << 36))
    raw("header-only.flac", b"fLaC" + bytes([0x80, 0, 0, 34]) + info + bytes(16))
    # a FLAC stream with frames whose STREAMINFO gives 0 samples (written without going back):
    # libsndfile reports an unknown length; the frames are counted instead
    sf.write(p("flac-no-length.flac"), tone(1.0), FS, subtype="PCM_16", format="FLAC")
    with open(p("flac-no-length.flac"), "r+b") as f:
        f.seek(8 + 10)  # STREAMINFO's last 8 bytes before the MD5: rate, channels, bits, 36-bit total
        q = struct.unpack(">Q", f.read(8))[0] & ~((1 << 36) - 1)
        f.seek(8 + 10)
        f.write(struct.pack(">Q", q))
    raw("hirate.wav", wav_header(1, 2147483647, 16, 4000) + (np.round(0.5 * np.sin(0.1 * np.arange(4000)) * 32767)
                                                                .astype("<i2").tobytes()))
    raw("lim-binary.ini", bytes(np.random.default_rng(9).integers(0, 256, 512, dtype=np.uint8)))
    with open(p("lim-good.ini"), "w") as f:
        f.write("[audio]\nthd_pct_max = 1\n")


if __name__ == "__main__":
    main()
