#!/usr/bin/env python3
"""Reference values for the materials_*.rs tests, evaluated with mpmath
(PyPI, arbitrary precision) straight from the published formulas, independent
of the Rust code. Run: python3 materials_reference_values.py
"""
from mpmath import mp, mpf, mpc, pi, sqrt, log, atan, exp, ln

mp.dps = 30
MU0 = mpf("1.25663706212e-6")
C0 = mpf(299792458)
ETA0 = MU0 * C0
NP_TO_DB = 20 / ln(10)


def delta(f, s=mpf("5.8e7")):
    return 1 / sqrt(pi * f * MU0 * s)


print("# copper (sigma 5.8e7)")
print("delta 1 GHz  [um]", delta(mpf(1e9)) * 1e6)
print("delta 10 GHz [um]", delta(mpf(1e10)) * 1e6)
print("Rs 10 GHz [ohm]  ", 1 / (mpf("5.8e7") * delta(mpf(1e10))))

print("# Djordjevic-Sarkar, IEEE T-EMC 43(4) 2001 eqs. 9-11: Dk 4, Df 0.02 @ 1 GHz, 1 kHz..1 THz")
f1, f2, f0, dk, df = mpf(1e3), mpf(1e12), mpf(1e9), mpf(4), mpf("0.02")
k = log((f2 + 1j * f0) / (f1 + 1j * f0))
m = -df * dk / k.imag
einf = dk * (1 + df * k.real / k.imag)
print("eps_inf", einf, "m", m)
for f in (mpf(1e8), mpf(1e10)):
    e = einf + m * log((f2 + 1j * f) / (f1 + 1j * f))
    print("f", f, "Dk", e.real, "Df", -e.imag / e.real)

print("# Hammerstad-Bekkadal K at 10 GHz")
for rq in (mpf("0.5e-6"), mpf("1e-6")):
    print("Rq", rq, "K", 1 + 2 / pi * atan(mpf("1.4") * (rq / delta(mpf(1e10))) ** 2))

print("# Cannonball-Huray r 0.5 um: K, Im(Zs/Rs) (Huray 2009; Bracken 2012; f = 14 pi/9)")
r = mpf("0.5e-6")
for f in (mpf(1e9), mpf(1e10), mpf(28e9)):
    d = delta(f)
    K = 1 + mpf(3) / 2 * (14 * pi / 9) / (1 + d / r + d**2 / (2 * r**2))
    z = mpc(1, 1) * (1 + mpf(3) / 2 * (14 * pi / 9) / (1 + mpc(1, -1) * d / (2 * r)))
    print("f", f, "K", K, "Im", z.imag)

print("# stripline dielectric loss pi f sqrt(er) tand / c0, er 4, tand 0.02, 10 GHz")
ad = pi * mpf(1e10) * sqrt(4) * mpf("0.02") / C0
print("alpha_d dB/m", ad * NP_TO_DB, "dB/in", ad * NP_TO_DB * mpf("0.0254"))

print("# Pozar stripline example: b 3.2 mm, er 2.2, W 2.66 mm, t 0.01 mm, sigma 5.813e7, tand 0.001, 10 GHz, Z0 50")
b, er, W, t, s, tand, f, Z0 = mpf("3.2e-3"), mpf("2.2"), mpf("2.66e-3"), mpf("1e-5"), mpf("5.813e7"), mpf("0.001"), mpf(1e10), mpf(50)
Rs = sqrt(pi * f * MU0 / s)
A = 1 + 2 * W / (b - t) + 1 / pi * (b + t) / (b - t) * log((2 * b - t) / t)
ac = mpf("2.7e-3") * Rs * er * Z0 * A / (30 * pi * (b - t))
print("Rs", Rs, "alpha_d", pi * f * sqrt(er) * tand / C0, "alpha_c", ac)

print("# Hammerstad-Jensen 1980 current-distribution factor K_i = exp(-1.2 (Z0/eta0)^0.7), Z0 = 50")
print("K_i", exp(-mpf("1.2") * (50 / ETA0) ** mpf("0.7")))

print("# resin volume fraction at 50 % by weight, densities 1.3 / 2.54 g/cm3; Lichtenecker Dk (resin 3.5, glass 6.3)")
v = (mpf("0.5") / mpf("1.3")) / (mpf("0.5") / mpf("1.3") + mpf("0.5") / mpf("2.54"))
print("v_resin", v, "Dk", exp(v * ln(mpf("3.5")) + (1 - v) * ln(mpf("6.3"))))
