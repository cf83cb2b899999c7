"""Signal builders shared by the AM end-to-end tests (tests/e2e/test_am_*.py).

Every signal is the carrier of amplitude A times a complex baseband b(t) (the signed or complex
envelope, b = 1 for an unmodulated carrier), written either as
  - a real IF signal, one channel:  x(t) = Re{A b(t) exp(j(2 pi fc t + phi))}
    (= A e(t) cos(2 pi fc t + phi) for a real envelope e), or
  - I/Q, two channels I then Q:     z(t) = A b(t) exp(j(2 pi fc t + phi)).
Files are 32-bit float WAV (no quantisation to account for), generated with fixed seeds.
"""
import math

import numpy as np
import soundfile as sf

FS = 48000
A = 0.4          # carrier amplitude: leaves head room for 150 % positive peaks (0.4 * 2.5 = 1.0)
PHI = 0.3        # carrier phase (rad): arbitrary, not 0, so no channel is trivially aligned
FC_IF = 12000.0  # IF carrier: mid-band at 48 kHz, the default +-10 kHz channel fits around it


def t_axis(seconds, fs=FS):
    return np.arange(int(round(seconds * fs))) / fs


def tone_envelope(t, m, fm, phase=0.0):
    """Textbook AM envelope 1 + m cos(2 pi fm t + phase)."""
    return 1.0 + m * np.cos(2 * np.pi * fm * t + phase)


def with_lead_in(b_mod, lead_s, fs=FS):
    """An unmodulated stretch (b = 1) of lead_s seconds, then b_mod: the capture then holds the
    true unmodulated carrier C = A, as modlens wants it (README: C from unmodulated stretches)."""
    lead = np.ones(int(round(lead_s * fs)), dtype=b_mod.dtype)
    return np.concatenate([lead, b_mod])


def carrier_wave(b, kind, fc, amp=A, phi=PHI, fs=FS):
    """The capture of carrier amplitude amp modulated by the complex baseband b (array)."""
    t = np.arange(len(b)) / fs
    z = amp * b * np.exp(1j * (2 * np.pi * fc * t + phi))
    if kind == "if":
        return np.real(z)
    return np.stack([np.real(z), np.imag(z)], axis=1)


def add_noise(x, kind, noise_power, seed):
    """White Gaussian noise of total power noise_power (mean square over the whole captured
    band): a real IF gets N(0, noise_power); I/Q gets a circular complex noise, variance
    noise_power / 2 in I and in Q, so that E|n|^2 = noise_power."""
    rng = np.random.default_rng(seed)
    if kind == "if":
        return x + rng.normal(0.0, math.sqrt(noise_power), x.shape)
    return x + rng.normal(0.0, math.sqrt(noise_power / 2), x.shape)


def carrier_power(kind, amp=A):
    """Mean square of the unmodulated carrier: amp^2/2 for a real cosine, amp^2 for a complex
    exponential (|z|^2)."""
    return amp * amp / 2 if kind == "if" else amp * amp


def write(path, x, fs=FS, subtype="FLOAT"):
    sf.write(path, x, fs, subtype=subtype)
    return path


def read(path):
    x, fs = sf.read(path, dtype="float64", always_2d=False)
    return x, fs


def baseband_of_file(x, kind, fc, fs=FS):
    """Mixes a capture (as read back) to 0 Hz: z exp(-j 2 pi fc t) for I/Q, 2 x exp(-j 2 pi fc t)
    for a real IF (doubled so that the envelope is the carrier amplitude; the image at -2 fc is
    left for the caller's low-pass)."""
    t = np.arange(x.shape[0]) / fs
    lo = np.exp(-2j * np.pi * fc * t)
    if kind == "if":
        return 2.0 * x * lo
    return (x[:, 0] + 1j * x[:, 1]) * lo


def brickwall(z, bandwidth, fs=FS):
    """Ideal low-pass: zeroes every FFT bin above |bandwidth| Hz (a periodic, zero-phase filter)."""
    n = len(z)
    f = np.fft.fftfreq(n, 1.0 / fs)
    spec = np.fft.fft(z)
    spec[np.abs(f) > bandwidth] = 0
    return np.fft.ifft(spec)


def periodic_bandlimited(e_period, fm, bandwidth):
    """One period of a periodic signal, given on a fine grid (e_period, N points per period of
    1/fm), band-limited to |f| <= bandwidth by dropping its Fourier-series harmonics k fm above
    it. Returns the band-limited period on the same grid."""
    spec = np.fft.fft(e_period)
    k = np.fft.fftfreq(len(e_period), 1.0 / len(e_period))  # harmonic number
    spec[np.abs(k) * fm > bandwidth + 1e-9] = 0
    return np.fft.ifft(spec)


def harmonic_amplitudes(e_period, kmax):
    """Amplitudes of harmonics 1..kmax of one period of a real periodic signal (fine grid)."""
    spec = np.fft.rfft(e_period) / len(e_period)
    return 2 * np.abs(spec[1:kmax + 1])


def fourier_coefficients(e_period):
    """Complex Fourier-series coefficients c_k (k = 0, +-1, ...) of one period of a periodic
    signal given on a fine uniform grid: e(theta) = sum_k c_k exp(j k theta). Indexed like
    numpy.fft (c[k] and c[-k])."""
    return np.fft.fft(e_period) / len(e_period)


def fourier_synth(c, fm, t, kmax, phase=0.0):
    """sum over |k| <= kmax of c_k exp(j k (2 pi fm t + phase)): the periodic signal of
    fundamental fm with every harmonic above kmax dropped, evaluated at the times t."""
    w = 2 * np.pi * fm * t + phase
    out = np.full(len(t), c[0], dtype=complex)
    for k in range(1, kmax + 1):
        out += c[k] * np.exp(1j * k * w) + c[-k] * np.exp(-1j * k * w)
    return out
