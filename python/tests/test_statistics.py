"""generate's output against its profile, measured by SciPy (a reference library outside the
project): every Welch bin within its chi-squared interval; and analyze's verdict, which must
pass the profile the samples came from and fail a wrong one.

Tolerances come from the sampling distribution (REFERENCES section 3): a Welch bin of Gaussian
noise over K Hann segments at 50 % overlap is distributed as S * chi2_nu / nu with
nu = 36 K^2 / (19 K - 1) (Welch 1967; Percival & Walden 1993), and the false-failure
probability of 1e-6 is split over the bins (Bonferroni).
"""

import numpy as np
from scipy import signal, stats

import noisewright
from conftest import MIC

SEED = 20_261_204
P_TOTAL = 1e-6
SEGMENT = 1024
# Kernel of the expected Welch bin: +-8 bins of the Hann window's |W|^2 at 16 points a bin
# (its sidelobes fall 18 dB/octave, so past 8 bins less than 1e-6 of it is left out).
SPAN, STEPS = 8, 16


def hann_kernel(fs):
    """Offsets (Hz) and weights of |W(offset)|^2 for scipy's periodic Hann window."""
    df = fs / SEGMENT
    offsets = (np.arange(-SPAN * STEPS, SPAN * STEPS) + 0.5) * (df / STEPS)
    w = signal.get_window("hann", SEGMENT)
    n = np.arange(SEGMENT)
    W = np.exp(-2j * np.pi * np.outer(offsets / fs, n)) @ w
    weight = np.abs(W) ** 2
    return offsets, weight / weight.sum()


def expected_bins(generator, freqs, fs):
    """E[Welch bin] at `freqs`: the designed density smoothed by the window's kernel, folded
    into (0, fs/2] as the spectrum of a real sampled signal is."""
    offsets, weight = hann_kernel(fs)
    f = np.abs(freqs[:, None] + offsets[None, :])
    f = np.where(f > fs / 2, fs - f, f)
    return (generator.density(f) * weight[None, :]).sum(axis=1)


def bins_outside(measured, expected, nu, p_bin):
    lo = stats.chi2.ppf(p_bin / 2, nu) / nu
    hi = stats.chi2.isf(p_bin / 2, nu) / nu
    ratio = measured / expected
    bad = (ratio < lo) | (ratio > hi)
    return bad, ratio, lo, hi


def test_welch_of_generate_follows_the_designed_density():
    profile = noisewright.Profile.from_path(MIC)
    fs = profile.sample_rate
    n = 1 << 22
    x = noisewright.generate(profile, n, seed=SEED)
    freqs, psd = signal.welch(x, fs=fs, window="hann", nperseg=SEGMENT,
                              noverlap=SEGMENT // 2, detrend=False, scaling="density")
    k_segments = (n - SEGMENT) // (SEGMENT // 2) + 1
    nu = 36 * k_segments**2 / (19 * k_segments - 1)
    # Bins 3 .. L/2 - 1: the first bins touch DC, the last is Nyquist's (not chi2_nu).
    keep = slice(3, SEGMENT // 2)
    g = noisewright.Generator(profile, seed=SEED)
    want = expected_bins(g, freqs[keep], fs)
    got = psd[keep]
    p_bin = P_TOTAL / got.size
    bad, ratio, lo, hi = bins_outside(got, want, nu, p_bin)
    worst = int(np.argmax(np.abs(np.log(ratio))))
    assert not bad.any(), (
        f"{bad.sum()} of {got.size} bins outside [{lo:.4f}, {hi:.4f}] (nu = {nu:.0f}); worst "
        f"{freqs[keep][worst]:.1f} Hz ratio {ratio[worst]:.4f}; seed {SEED}")
    # The check can fail: the same bins against a density 1 dB high must all but fail.
    bad_off, *_ = bins_outside(got, want * 10 ** 0.1, nu, p_bin)
    assert bad_off.mean() > 0.9, f"a 1 dB error went unseen (seed {SEED})"
    # And the variance of the whole record against the design's (chi2 on the variance of
    # correlated samples would need their correlation; the Welch bins above carry it).
    assert np.isclose(x.std(), g.expected_rms, rtol=0.02), (x.std(), g.expected_rms, SEED)


WRONG = """# Invented demo: the mic preamp with a floor 3.3 times too high (about 6.8 dB more noise
# in all), for a verdict that must fail.
name = "wrong floor"
sample_rate = "48 kHz"
[band]
low = "20 Hz"
high = "20 kHz"
order = 2
[[floor]]
density = "4 nV/rtHz"
corner = "80 Hz"
[[resistor]]
resistance = "150 Ohm"
temperature = "25 C"
"""


def test_analyze_passes_its_profile_and_fails_a_wrong_one():
    profile = noisewright.Profile.from_path(MIC)
    x = noisewright.generate(profile, 4 * 48_000, seed=SEED)
    right = noisewright.analyze(x, profile.sample_rate, profile)
    assert right["pass"] is True, (right["comparison"], SEED)
    assert right["comparison"]["bands_checked"] >= 10
    wrong = noisewright.analyze(x, profile.sample_rate, noisewright.Profile.from_toml(WRONG))
    assert wrong["pass"] is False, (wrong["comparison"], SEED)
    # Measured only: no verdict.
    plain = noisewright.analyze(list(x[:48_000]), profile.sample_rate)
    assert "pass" not in plain and "comparison" not in plain
    assert np.isclose(plain["rms"], np.sqrt(np.mean(x[:48_000] ** 2)), rtol=1e-12)
