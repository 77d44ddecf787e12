#!/usr/bin/env python3
"""The benchmark's peer: the default feature set computed with numpy and scipy, the way a script would (whole files in memory).

Usage: python3 bench/peer.py ARCHIVE SCALE   (every *.wav in ARCHIVE, 16- or 24-bit PCM, all channels taken as acceleration in m/s²)
Prints one JSON line: seconds (after imports; the bench times the whole process itself), samples, peak RSS (MB), scipy version.
"""
import glob, json, os, resource, sys, time
import numpy as np
import scipy
import scipy.io.wavfile
import scipy.signal as sig

G = 10 ** 0.3



def peak_rss_mb():
    """This process's own peak resident memory (VmHWM): ru_maxrss also counts what the parent held when it started this one."""
    try:
        with open('/proc/self/status') as f:
            for line in f:
                if line.startswith('VmHWM:'):
                    return int(line.split()[1]) / 1024
    except OSError:
        pass
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024

def band_ms(f, p, df, lo, hi):
    a = np.maximum(0, f - df / 2); b = np.minimum(f[-1], f + df / 2)
    inside = np.clip(np.minimum(b, hi) - np.maximum(a, lo), 0, None)
    return float(np.sum(p * df * inside / (b - a)))


def features(x, fs):
    out = {}
    m = x.mean(); sd = x.std(); out.update(mean=m, std=sd, rms=np.sqrt(np.mean(x * x)), min=x.min(), max=x.max())
    d = x - m; out['skewness'] = np.mean(d ** 3) / sd ** 3; out['kurtosis'] = np.mean(d ** 4) / sd ** 4
    f, p = sig.welch(x, fs=fs, nperseg=4096, noverlap=2048, window='hann')
    df = f[1]
    out['dominant_frequency'] = f[1 + np.argmax(p[1:])]
    out['spectral_centroid'] = np.sum(f[1:] * p[1:]) / np.sum(p[1:])
    for lo, hi in [(20, 200), (200, 1000)]:
        out[f'band_{lo}_{hi}_rms'] = np.sqrt(band_ms(f, p, df, lo, hi))
    for b, xs in [(1, range(-5, 4)), (3, range(-16, 11))]:
        for x_ in xs:
            mid = 1000 * G ** (x_ / b)
            lo, hi = mid * G ** (-1 / (2 * b)), mid * G ** (1 / (2 * b))
            out[f'oct{b}_{x_}'] = np.sqrt(band_ms(f, p, df, lo, hi)) if hi <= fs / 2 else None
    w = 2 * np.pi * f[1:]
    out['velocity_10_1000_rms'] = np.sqrt(band_ms(f[1:], p[1:] / w ** 2, df, 10, 1000)) * 1000
    n = int(fs)
    k = len(x) // n
    win = x[:k * n].reshape(k, n)
    out['windows'] = (win.mean(1), np.sqrt((win * win).mean(1)), np.abs(win).max(1))
    x2 = x * x
    for tau in (0.125, 1.0):
        a = 1 - np.exp(-1 / (tau * fs))
        out[f'max_twrms_{tau}'] = np.sqrt(sig.lfilter([a], [1, -(1 - a)], x2).max())
    c = np.concatenate([[0], np.cumsum(x2)])
    out['mtvv'] = np.sqrt((c[n:] - c[:-n]).max() / n)
    sos = sig.butter(4, [2500, 4500], btype='bandpass', output='sos', fs=fs)
    y = sig.sosfiltfilt(sos, x)
    env = np.abs(sig.hilbert(y))
    out.update(filtered_rms=np.sqrt(np.mean(y * y)), env_mean=env.mean(), env_rms=np.sqrt(np.mean(env * env)), env_peak=env.max())
    fe, pe = sig.welch(env, fs=fs, nperseg=4096, noverlap=2048)
    out['env_dominant_frequency'] = fe[1 + np.argmax(pe[1:])]
    return out


def main():
    archive, scale = sys.argv[1], float(sys.argv[2])
    t0 = time.perf_counter()
    samples = 0
    for path in sorted(glob.glob(os.path.join(archive, '*.wav'))):
        fs, data = scipy.io.wavfile.read(path)
        data = data.reshape(len(data), -1)
        # scipy reads 24-bit PCM into the top bits of int32, so full scale is 2^(8·itemsize − 1) either way.
        full = 2.0 ** (8 * data.dtype.itemsize - 1)
        for c in range(data.shape[1]):
            x = data[:, c].astype(np.float64) / full * scale
            features(x, float(fs))
            samples += len(x)
    seconds = time.perf_counter() - t0
    print(json.dumps({'seconds': seconds, 'samples': samples, 'peakRssMB': peak_rss_mb(), 'scipy': scipy.__version__}))


if __name__ == '__main__':
    main()
