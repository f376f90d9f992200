#!/usr/bin/python3
"""ref_sg.py W P D [W P D ...]: prints Debian python3-scipy's Savitzky-Golay
weights scipy.signal.savgol_coeffs(W, P, D, use='dot') (data order), one line
per case."""
import sys
from scipy.signal import savgol_coeffs
a = [int(v) for v in sys.argv[1:]]
for w, p, d in zip(a[0::3], a[1::3], a[2::3]):
    print(" ".join("%.17g" % c for c in savgol_coeffs(w, p, deriv=d, use="dot")))
