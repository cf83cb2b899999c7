#!/usr/bin/python3
"""Writes the stepped-tone recording of tests/unit/test_dsp_steps.c and its expected figures.

The recording (48 kHz, mono, raw little-endian float32): tones with a 2nd harmonic at -40 dBc and a
3rd at -46 dBc (those below Nyquist), each 1.2 s, separated by 0.25 s pauses, then a level change
at 1 kHz without a pause, phase-continuous, white noise at -110 dBFS; the whole recording passed
through an analytic filter (scipy Butterworth: 2nd-order high-pass at 60 Hz and 4th-order
low-pass at 10 kHz, one sosfilt over the whole signal so every step starts with a settling edge).
The text file lists one line per tone step, in order:
    frequency_hz  level_dbfs_in  gain_db  thd_pct
where gain_db = 20 lg |H(f)| from scipy.signal.sosfreqz and thd_pct the THD after the filter over
the harmonics at or below 20 kHz: 100 sqrt(sum (a_h |H(h f)| / |H(f)|)^2).
Usage: make_steps_fixture.py OUT.f32 OUT.txt
"""
import sys

import numpy as np
from scipy import signal

RATE = 48000
STEPS = [(40, -12), (100, -12), (315, -12), (1000, -12), (3150, -12), (8000, -12), (12500, -12),
         (16000, -12), (1000, -24)]
HARM = [(2, -40.0), (3, -46.0)]
STEP_S, PAUSE_S = 1.2, 0.25


def main():
    sos = np.vstack([signal.butter(2, 60, 'highpass', fs=RATE, output='sos'),
                     signal.butter(4, 10000, 'lowpass', fs=RATE, output='sos')])
    pieces, phase = [], 0.0
    rows = []
    for i, (f, lev) in enumerate(STEPS):
        n = int(round(STEP_S * RATE))
        t = np.arange(n)
        a = 10 ** (lev / 20)
        x = a * np.sin(phase + 2 * np.pi * f * t / RATE)
        for h, dbc in HARM:
            if h * f < RATE / 2:
                x += a * 10 ** (dbc / 20) * np.sin(h * (phase + 2 * np.pi * f * t / RATE))
        phase = (phase + 2 * np.pi * f * n / RATE) % (2 * np.pi)
        pieces.append(x)
        nxt = STEPS[i + 1] if i + 1 < len(STEPS) else None
        if nxt is not None and nxt[0] != f:  # a pause between different frequencies
            pieces.append(np.zeros(int(round(PAUSE_S * RATE))))
        _, h1 = signal.sosfreqz(sos, worN=[f], fs=RATE)
        g1 = abs(h1[0])
        d2 = 0.0
        for h, dbc in HARM:
            if h * f <= 20000 and h * f < RATE / 2:
                _, hh = signal.sosfreqz(sos, worN=[h * f], fs=RATE)
                d2 += (10 ** (dbc / 20) * abs(hh[0]) / g1) ** 2
        rows.append((f, lev, 20 * np.log10(g1), 100 * np.sqrt(d2)))
    x = np.concatenate([np.zeros(int(0.3 * RATE))] + pieces + [np.zeros(int(0.3 * RATE))])
    rng = np.random.default_rng(20)
    x = x + 10 ** (-110 / 20) / np.sqrt(2) * rng.standard_normal(len(x))
    y = signal.sosfilt(sos, x)
    y.astype('<f4').tofile(sys.argv[1])
    with open(sys.argv[2], 'w') as fh:
        for r in rows:
            fh.write('%.6f %.6f %.9f %.9f\n' % r)


if __name__ == '__main__':
    main()
