"""MNE + scikit-learn peer for the training benchmark (scripts/bench-engine.ts).

Same work as Tiller's trainDecoder(method='csp'): causal Butterworth band-pass of the whole
recording (scipy.signal.sosfilt), epochs after each cue, 5-fold chronological
cross-validation of mne.decoding.CSP(n_components=6, log-variance) + sklearn
LinearDiscriminantAnalysis(solver='lsqr', shrinkage='auto') with CSP fitted inside each fold,
then a final fit on all trials. Loading the file is not timed.
argv: data.f32 (channel-major float32) job.json
"""
import json, sys, time
import numpy as np
from scipy import signal
import mne
from mne.decoding import CSP
from sklearn.discriminant_analysis import LinearDiscriminantAnalysis
from sklearn.model_selection import KFold, cross_val_predict
from sklearn.pipeline import make_pipeline

mne.set_log_level('ERROR')
job = json.load(open(sys.argv[2]))
C, N, fs = job['channels'], job['samples'], job['rateHz']
data = np.fromfile(sys.argv[1], dtype=np.float32).reshape(C, N)
t0 = time.perf_counter()
sos = signal.butter(job['order'], job['band'], 'bandpass', fs=fs, output='sos')
filtered = signal.sosfilt(sos, data.astype(np.float64), axis=1)
start, length = int(round(job['epoch'][0] * fs)), int(round((job['epoch'][1] - job['epoch'][0]) * fs))
X = np.stack([filtered[:, s + start:s + start + length] for s in job['cueSamples']])
y = np.array(job['labels'])
pipe = make_pipeline(CSP(n_components=6, reg=None, log=True, norm_trace=False, component_order='alternate'),
                     LinearDiscriminantAnalysis(solver='lsqr', shrinkage='auto'))
pred = cross_val_predict(pipe, X, y, cv=KFold(5, shuffle=False))
pipe.fit(X, y)
seconds = time.perf_counter() - t0
json.dump(dict(seconds=seconds, accuracy=float((pred == y).mean())), sys.stdout)
