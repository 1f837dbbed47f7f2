"""numpy/scipy peer for the per-block decode benchmark (scripts/bench-engine.ts).

Does the same work per block as Tiller's online decoder: causal Butterworth band-pass with
carried state (scipy.signal.sosfilt with zi), spatial filter W, squared components into a
sliding-window ring buffer with running sums, log band power, LDA score and probability.
Reads a JSON job on stdin, prints a JSON list of timings.
"""
import json, sys, time
import numpy as np
from scipy import signal

job = json.load(sys.stdin)
rng = np.random.default_rng(1)
out = []
for cfg in job['configs']:
    C, fs, block, blocks = cfg['channels'], cfg['rate'], cfg['block'], cfg['blocks']
    sos = signal.butter(job['order'], job['band'], 'bandpass', fs=fs, output='sos')
    K = job['components']
    W = rng.standard_normal((K, C))
    w_lda, b_lda = rng.standard_normal(K), 0.1
    n = int(round(job['windowSeconds'] * fs))
    zi = np.zeros((sos.shape[0], 2, C))
    ring = np.zeros((n, K))
    sums = np.zeros(K)
    pos = 0
    data = (rng.standard_normal((blocks + 50, block, C)) * 20).astype(np.float32)
    times = np.empty(blocks)
    for i in range(blocks + 50):
        x = data[i]
        t0 = time.perf_counter_ns()
        y, zi = signal.sosfilt(sos, x, axis=0, zi=zi)
        comp = y @ W.T
        sq = comp * comp
        idx = (pos + np.arange(block)) % n
        sums += sq.sum(axis=0) - ring[idx].sum(axis=0)
        ring[idx] = sq
        pos = (pos + block) % n
        feat = np.log(np.maximum(sums / n, 1e-300))
        score = feat @ w_lda + b_lda
        prob = 1.0 / (1.0 + np.exp(-score))
        t1 = time.perf_counter_ns()
        if i >= 50:
            times[i - 50] = (t1 - t0) / 1000.0
    out.append(dict(channels=C, rate=fs, block=block, median_us=float(np.median(times)), p99_us=float(np.percentile(times, 99))))
json.dump(out, sys.stdout)
