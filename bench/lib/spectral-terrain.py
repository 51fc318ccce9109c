"""A spectral test terrain for the benchmarks: Gaussian noise filtered to a power-law spectrum
(amplitude ∝ k^(−beta/2), i.e. power ∝ k^−beta) by numpy's FFT, scaled to `relief` metres, plus
white noise of `noise` metres (standard deviation). Written as raw float32, row-major.

    /usr/bin/python3 bench/lib/spectral-terrain.py SIZE SEED OUT.f32 [--beta 2.2] [--relief 300] [--noise 0.3]
"""
import argparse
import numpy as np

p = argparse.ArgumentParser()
p.add_argument('size', type=int)
p.add_argument('seed', type=int)
p.add_argument('out')
p.add_argument('--beta', type=float, default=2.2)
p.add_argument('--relief', type=float, default=300.0)
p.add_argument('--noise', type=float, default=0.3)
a = p.parse_args()
n = a.size
rng = np.random.default_rng(a.seed)
ky = np.fft.fftfreq(n)[:, None]
kx = np.fft.rfftfreq(n)[None, :]
k = np.sqrt(kx * kx + ky * ky)
k[0, 0] = 1.0
spec = np.fft.rfft2(rng.standard_normal((n, n), dtype=np.float32))
spec *= (k ** (-a.beta / 2)).astype(np.float32)
spec[0, 0] = 0
del k
z = np.fft.irfft2(spec, s=(n, n)).astype(np.float32)
del spec
z *= a.relief / (z.max() - z.min())
z += rng.standard_normal((n, n), dtype=np.float32) * np.float32(a.noise)
z += np.float32(400)
z.astype('<f4').tofile(a.out)
