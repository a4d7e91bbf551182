#!/usr/bin/python3
"""Writes a synthetic recorded run for benchmarks: N frames of a Hill
(Ramberg-Osgood) curve for a 6061-T6-like strip (handbook E 68.9 GPa, yield
276 MPa; demo hardening exponent), pulled to 12 % and broken, with noise on
force and extension. Usage: make_table.py N OUT.csv"""
import sys
import numpy as np

n, out = int(sys.argv[1]), sys.argv[2]
E, s02, hard = 68900.0, 276.0, 14.0
S0, L0 = 80.0, 80.0
rng = np.random.default_rng(7)
t = np.arange(n) / 1000.0
e = 0.12 * np.arange(n) / (n - 1)
# Invert e = s/E + 0.002 (s/s02)^hard by bisection, all frames at once.
lo, hi = np.zeros(n), np.full(n, 2.0 * s02)
for _ in range(60):
    mid = 0.5 * (lo + hi)
    over = mid / E + 0.002 * (mid / s02) ** hard > e
    hi = np.where(over, mid, hi)
    lo = np.where(over, lo, mid)
s = 0.5 * (lo + hi)
s[-200:] = s[-200] * np.linspace(1.0, 0.001, 200)  # fracture
force = s * S0 * (1 + 0.0005 * rng.standard_normal(n))
ext = e * L0 + 0.0003 * rng.standard_normal(n)
xh = e * 120.0 + 2e-5 * force
np.savetxt(out, np.column_stack([t, force, ext, xh]), fmt=["%.6f", "%.3f", "%.6f", "%.5f"],
           delimiter=",", header="time_s,force_N,extension_mm,crosshead_mm", comments="")
