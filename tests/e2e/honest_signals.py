"""Captures of the kinds people really make, for the honest-figures tests (numpy, fixed seeds).

Each entry of CASES is (file name, writer) where the writer returns (samples, rate, subtype) and
the samples are (frames,) or (frames, channels). The set covers what issue 17 found: silence,
denormal samples, DC alone, a 20 Hz and a 15 kHz tone, 0.1..1 s captures with 50 or 60 Hz hum, an
8 kHz 16-bit tone, noise alone, hum alone, stereo copies of one source (exact and near), a real IF
saved as stereo, unmodulated carriers (IF, I/Q, with hum modulation, and pure), a tone in heavy
noise, an audio tone above 3 kHz with hum sidebands weaker than its hum, a 150 ms dropout, and AM
with a tone as IF and I/Q.
"""
import numpy as np

FS = 48000


def t_axis(seconds, fs=FS):
    return np.arange(int(round(seconds * fs))) / fs


def hum(t, mains=50.0, amp=1e-3):
    """Mains hum: the fundamental, 2nd at half and 3rd at 0.3 of its amplitude."""
    return amp * (np.sin(2 * np.pi * mains * t) + 0.5 * np.sin(2 * np.pi * 2 * mains * t + 1.0)
                  + 0.3 * np.sin(2 * np.pi * 3 * mains * t + 2.0))


def noise(n, rms, seed):
    return np.random.default_rng(seed).normal(0.0, rms, n)


def tone_with_hum(seconds, mains, fs=FS, seed=1):
    t = t_axis(seconds, fs)
    return 0.5 * np.sin(2 * np.pi * 1000.0 * t) + hum(t, mains) + noise(t.size, 1e-5, seed)


def am_if(t, m=0.5, fm=1000.0, fc=12000.0, a=0.4):
    return a * (1 + m * np.sin(2 * np.pi * fm * t)) * np.cos(2 * np.pi * fc * t)


def carrier_hum_iq(t, h, fc, a=0.4, sigma=0.0, seed=5):
    """An unmodulated I/Q carrier at fc with hum modulation of index h (50 Hz) and complex white
    noise of sigma per component."""
    env = a * (1 + h * np.sin(2 * np.pi * 50.0 * t))
    z = env * np.exp(2j * np.pi * fc * t)
    if sigma > 0:
        g = np.random.default_rng(seed)
        z = z + g.normal(0, sigma, t.size) + 1j * g.normal(0, sigma, t.size)
    return np.stack([z.real, z.imag], axis=1)


def _silence():
    return np.zeros(2 * FS), FS, "FLOAT"


def _denormal():
    return noise(2 * FS, 1e-41, 2), FS, "FLOAT"


def _dc():
    return np.full(2 * FS, 0.5), FS, "FLOAT"


def _tone(f):
    return lambda: (0.5 * np.sin(2 * np.pi * f * t_axis(2.0)) + noise(2 * FS, 1e-6, 3), FS, "FLOAT")


def _short(seconds, mains):
    return lambda: (tone_with_hum(seconds, mains, seed=int(seconds * 100) + int(mains)), FS, "FLOAT")


def _tone8k16():
    t = t_axis(2.0, 8000)
    return 0.5 * np.sin(2 * np.pi * 1000.0 * t + 0.1), 8000, "PCM_16"


def _noise_only():
    return noise(2 * FS, 10 ** (-40 / 20), 4), FS, "FLOAT"


def _hum_only():
    t = t_axis(2.0)
    return hum(t, 50.0, 10 ** (-50 / 20)) + noise(t.size, 1e-5, 5), FS, "FLOAT"


def _stereo_copy():
    t = t_axis(2.0)
    a = 0.3 * np.sin(2 * np.pi * 1000.0 * t) + hum(t) + noise(t.size, 1e-5, 6)
    return np.stack([a, a], axis=1), FS, "PCM_24"


def _stereo_near():
    """A loudspeaker recorded by two microphones: the same audio, 1 dB apart, each with its own
    noise 60 dB down."""
    t = t_axis(2.0)
    a = 0.3 * np.sin(2 * np.pi * 1000.0 * t) + 0.05 * np.sin(2 * np.pi * 3300.0 * t) + hum(t)
    return np.stack([a + noise(t.size, 2e-4, 7), 0.89 * a + noise(t.size, 2e-4, 8)], axis=1), FS, "PCM_24"


def _if_stereo():
    t = t_axis(2.0)
    x = am_if(t) + noise(t.size, 1e-5, 9)
    return np.stack([x, x], axis=1), FS, "PCM_24"


def _carrier_if():
    """The carrier hum-and-noise test: an IF carrier at 12 kHz with 50 Hz hum modulation of
    index 0.005 (-46 dB re 100 %) and a little noise."""
    t = t_axis(2.0)
    env = 0.4 * (1 + 0.005 * np.sin(2 * np.pi * 50.0 * t))
    return env * np.cos(2 * np.pi * 12000.0 * t) + noise(t.size, 1e-5, 10), FS, "FLOAT"


def _carrier_iq():
    return carrier_hum_iq(t_axis(2.0), 0.005, 5000.0, sigma=4e-5), FS, "FLOAT"


def _pure_carrier():
    return 0.4 * np.cos(2 * np.pi * 12000.0 * t_axis(2.0)), FS, "FLOAT"


def _tone_in_noise():
    """A -20 dBFS sine (P1 = 0.01) in white noise at -35 dBFS (variance 10^-3.5)."""
    t = t_axis(2.0)
    return (10 ** (-20 / 20) * np.sqrt(2) * np.sin(2 * np.pi * 1000.0 * t)
            + noise(t.size, 10 ** (-35 / 20), 11)), FS, "FLOAT"


def _tone5k_hum():
    t = t_axis(2.0)
    x = 0.3 * np.sin(2 * np.pi * 5000.0 * t) * (1 + 0.003 * np.sin(2 * np.pi * 50.0 * t))
    return x + hum(t, 50.0, 10 ** (-40 / 20)) + noise(t.size, 1e-5, 12), FS, "FLOAT"


def _dropout():
    t = t_axis(2.0)
    x = 0.5 * np.sin(2 * np.pi * 1000.0 * t) + noise(t.size, 1e-4, 13)
    x[int(0.7 * FS):int(0.85 * FS)] = 0.0
    return x, FS, "PCM_24"


def _am_iq():
    t = t_axis(3.0)
    env = 0.4 * (1 + 0.6 * np.sin(2 * np.pi * 1000.0 * t))
    z = env * np.exp(2j * np.pi * 3000.0 * t) + (noise(t.size, 1e-4, 14) + 1j * noise(t.size, 1e-4, 15))
    return np.stack([z.real, z.imag], axis=1), FS, "PCM_24"


def _am_if():
    t = t_axis(3.0)
    return am_if(t, 0.8) + noise(t.size, 1e-4, 16), FS, "PCM_24"


CASES = [
    ("silence.wav", _silence), ("denormal.wav", _denormal), ("dc.wav", _dc),
    ("tone20.wav", _tone(20.0)), ("tone15k.wav", _tone(15000.0)),
    ("short0.1.wav", _short(0.1, 50.0)), ("short0.25.wav", _short(0.25, 50.0)),
    ("short0.5_60.wav", _short(0.5, 60.0)), ("short1.wav", _short(1.0, 50.0)),
    ("tone8k16.wav", _tone8k16), ("noise.wav", _noise_only), ("humonly.wav", _hum_only),
    ("stereo_copy.wav", _stereo_copy), ("stereo_near.wav", _stereo_near), ("if_stereo.wav", _if_stereo),
    ("carrier_if.wav", _carrier_if), ("carrier_iq.wav", _carrier_iq), ("pure_carrier.wav", _pure_carrier),
    ("tone_noise.wav", _tone_in_noise), ("tone5k_hum.wav", _tone5k_hum), ("dropout.wav", _dropout),
    ("am_iq.wav", _am_iq), ("am_if.wav", _am_if),
]


def write_all(names=None):
    """Writes the cases (all, or those named) into the working folder; returns {name: (x, fs)}."""
    import soundfile as sf
    out = {}
    for name, make in CASES:
        if names is not None and name not in names:
            continue
        x, fs, subtype = make()
        sf.write(name, x.astype(np.float32) if subtype == "FLOAT" else x, fs, subtype=subtype)
        out[name] = (x, fs)
    return out
