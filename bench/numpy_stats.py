#!/usr/bin/env python3
"""What a user writes today without vibgate: load the whole WAV with numpy/scipy and compute the
same per-channel and per-frame moments (mean, RMS, min, max, skewness, kurtosis, crest factor,
whole record and 1 s frames). Used by bench/run.mjs as the reference for speed and memory."""
import sys
import numpy as np
from scipy.io import wavfile
from scipy import stats


def main(path: str, frame_seconds: float = 1.0) -> None:
    fs, data = wavfile.read(path)  # whole record in memory
    if data.dtype.kind in "iu":
        scale = float(2 ** (8 * data.dtype.itemsize - 1))
        x = data.astype(np.float64) / scale
    else:
        x = data.astype(np.float64)
    n, channels = x.shape
    mean = x.mean(axis=0)
    rms = np.sqrt((x * x).mean(axis=0))
    lo = x.min(axis=0)
    hi = x.max(axis=0)
    skew = stats.skew(x, axis=0)
    kurt = stats.kurtosis(x, axis=0, fisher=False)
    crest = np.maximum(-lo, hi) / rms
    frame = int(round(frame_seconds * fs))
    k = n // frame
    f = x[: k * frame].reshape(k, frame, channels)
    f_rms = np.sqrt((f * f).mean(axis=1))
    f_skew = stats.skew(f, axis=1)
    f_kurt = stats.kurtosis(f, axis=1, fisher=False)
    f_crest = np.maximum(-f.min(axis=1), f.max(axis=1)) / f_rms
    print(
        f"{channels} channels, {n} samples: kurtosis {kurt.mean():.4f}, "
        f"frame kurtosis {f_kurt.min():.3f}..{f_kurt.max():.3f}, crest {crest.max():.3f}, "
        f"frame crest {f_crest.max():.3f}, skew {np.abs(skew).max():.4f}, frame skew {np.abs(f_skew).max():.3f}, "
        f"mean {np.abs(mean).max():.2e}"
    )


if __name__ == "__main__":
    main(sys.argv[1])
