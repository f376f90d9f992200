#!/usr/bin/python3
"""ref_sg.py W P D: prints Debian python3-scipy's Savitzky-Golay weights
scipy.signal.savgol_coeffs(W, P, D, use='dot') (data order), one line."""
import sys
from scipy.signal import savgol_coeffs
w, p, d = (int(v) for v in sys.argv[1:4])
print(" ".join("%.17g" % c for c in savgol_coeffs(w, p, deriv=d, use="dot")))
