#!/usr/bin/env python3
"""Reference Welch spectra for qamsight's spectrum module, computed with SciPy.

Writes two files beside this script (or into the directory given as the first argument):
  welch_signal.csv  the deterministic test signal: index, re, im. Complex white noise, two
                    tones and a band of filtered noise, rounded to float32 so that the C++
                    side reads exactly the samples SciPy analysed.
  welch_table.csv   rows of two kinds:
    psd:    case, n (nperseg), noverlap, window, fs, scaling, bin, frequency, value
            scipy.signal.welch(x, fs, window, nperseg, noverlap, detrend=False,
            return_onesided=False, scaling=..., average='mean'), both outputs passed through
            numpy.fft.fftshift so that bins run from -fs/2 upwards.
    window: N, window, enbw_bins, coherent_gain, scalloping_loss_db from
            scipy.signal.get_window(name, N) (periodic windows), with the definitions
            N sum(w^2)/sum(w)^2, sum(w)/N and -20 log10|sum w e^{i pi n/N}| / sum(w).
"""
import csv
import os
import sys

import numpy as np
from scipy import signal

# (nperseg, noverlap, SciPy window name, fs, scaling): sizes even and odd, powers of two and
# not, overlaps 0 to 75%, every window qamsight offers.
CASES = [
    (256, 128, "hann", 1.0e6, "density"),
    (256, 0, "boxcar", 1.0, "density"),
    (200, 150, "blackmanharris", 48000.0, "density"),
    (128, 64, "flattop", 2.0e6, "spectrum"),
    (255, 100, "hann", 3.0e5, "density"),
    (160, 40, "blackmanharris", 1.0, "spectrum"),
]
SIGNAL_LENGTH = 2500


def test_signal():
    rng = np.random.default_rng(20240611)
    n = np.arange(SIGNAL_LENGTH)
    noise = (rng.standard_normal(SIGNAL_LENGTH) + 1j * rng.standard_normal(SIGNAL_LENGTH)) * np.sqrt(0.5)
    band = signal.lfilter(signal.firwin(63, 0.15), 1.0, (rng.standard_normal(SIGNAL_LENGTH + 62)
                                                        + 1j * rng.standard_normal(SIGNAL_LENGTH + 62)))[62:]
    band = band * np.exp(2j * np.pi * 0.21 * n)
    x = (0.05 * noise + 0.8 * np.exp(2j * np.pi * (0.0731 * n + 0.1))
         + 0.02 * np.exp(-2j * np.pi * (0.3377 * n)) + 0.3 * band)
    re = x.real.astype(np.float32)
    im = x.imag.astype(np.float32)
    return re, im


def main():
    out_dir = sys.argv[1] if len(sys.argv) > 1 else os.path.dirname(os.path.abspath(__file__))
    re, im = test_signal()
    with open(os.path.join(out_dir, "welch_signal.csv"), "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["index", "re", "im"])
        for i, (a, b) in enumerate(zip(re, im)):
            # 9 significant digits identify a float32 exactly.
            w.writerow([i, "%.9g" % a, "%.9g" % b])
    x = re.astype(np.float64) + 1j * im.astype(np.float64)
    rows = []
    for case, (nperseg, noverlap, window, fs, scaling) in enumerate(CASES):
        f, p = signal.welch(x, fs=fs, window=window, nperseg=nperseg, noverlap=noverlap, detrend=False,
                            return_onesided=False, scaling=scaling, average="mean")
        f = np.fft.fftshift(f)
        p = np.fft.fftshift(p)
        for k in range(nperseg):
            rows.append(["psd", case, nperseg, noverlap, window, repr(fs), scaling, k, repr(float(f[k])),
                         repr(float(p[k])), "", "", ""])
    for window in ["boxcar", "hann", "blackmanharris", "flattop"]:
        for n in [64, 1000, 4096]:
            wv = signal.get_window(window, n)
            s = wv.sum()
            half = abs(np.sum(wv * np.exp(1j * np.pi * np.arange(n) / n)))
            rows.append(["window", "", n, "", window, "", "", "", "", "",
                         repr(float(n * np.sum(wv ** 2) / s ** 2)), repr(float(s / n)),
                         repr(float(-20 * np.log10(half / s)))])
    with open(os.path.join(out_dir, "welch_table.csv"), "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["kind", "case", "n", "noverlap", "window", "fs", "scaling", "bin", "frequency", "value",
                    "enbw_bins", "coherent_gain", "scalloping_loss_db"])
        w.writerows(rows)


if __name__ == "__main__":
    main()
