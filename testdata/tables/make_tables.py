#!/usr/bin/env python3
"""Writes the small, fictional example tables in this directory.

A made-up array of 8 antennas observes a 20 mJy Gaussian source (0.4" FWHM)
at the phase centre for 30 integrations of 10 s, in two channels near
230 GHz. Noise 1 mJy per part; the stated weights are 4x too small, as in
many exports, so `deflect inspect` reports a weight-scale factor near 4.
Run: python3 make_tables.py (standard library only, fixed seed).
"""
import math
import random

C = 299792458.0
rng = random.Random(20261201)
ants = [(2000 * math.sqrt(rng.random()), 2 * math.pi * rng.random()) for _ in range(8)]
ants = [(r * math.cos(a), r * math.sin(a)) for r, a in ants]
fwhm = 0.4 / 206264.80624709636
sigma = 1e-3
rows = []
for it in range(30):
    h = 2 * math.pi * it * 10 / 86164
    c, s = math.cos(h), math.sin(h)
    for i in range(8):
        for j in range(i + 1, 8):
            for ch in range(2):
                f = 230e9 + ch * 15.625e6
                bx, by = ants[j][0] - ants[i][0], ants[j][1] - ants[i][1]
                um, vm = c * bx - s * by, 0.7 * (s * bx + c * by)
                wm = 0.3 * (s * bx)
                q = (um * f / C) ** 2 + (vm * f / C) ** 2
                re = 0.02 * math.exp(-math.pi ** 2 * fwhm ** 2 * q / (4 * math.log(2)))
                rows.append(dict(um=um, vm=vm, wm=wm, f=f, t=5.1e9 + 10 * it, a1=i, a2=j, ch=ch,
                                 re=re + sigma * rng.gauss(0, 1), im=sigma * rng.gauss(0, 1),
                                 flag=1 if rng.random() < 0.02 else 0))

meta = ("# label: example array, band 6\n# freq: 230 GHz\n# dish: 12\n"
        "# phase-centre: 150.0 -12.5\n# sign: -1\n")
with open("example.csv", "w") as out:
    out.write("# Fictional data for tests and examples (make_tables.py).\n" + meta)
    out.write("u_m,v_m,w_m,re,im,weight,freq,time,ant1,ant2,chan,flag\n")
    for r in rows:
        out.write("%.4f,%.4f,%.4f,%.7e,%.7e,%.7e,%.6f,%.1f,%d,%d,%d,%d\n" % (
            r["um"], r["vm"], r["wm"], r["re"], r["im"], 0.25 / sigma ** 2, r["f"], r["t"],
            r["a1"], r["a2"], r["ch"], r["flag"]))
    for i in range(8):  # autocorrelations, excluded and counted by the reader
        out.write("0,0,0,%.7e,0,%.7e,%.6f,5.1e9,%d,%d,0,0\n" % (0.5, 0.25 / sigma ** 2, 230e9, i, i))

# The same visibilities with sigma, in kilo-wavelengths, space separated,
# and without antenna columns (so the weight check uses the imaginary parts).
with open("example-klambda.txt", "w") as out:
    out.write("# label: example array, kilolambda export\n# dish: 12 m\n")
    out.write("u_klambda   v_klambda    real          imag          sigma         freq\n")
    for r in rows:
        if r["flag"]:
            continue
        k = r["f"] / C / 1e3
        out.write("%11.5f %11.5f  %13.6e %13.6e %13.6e %.6f\n" % (
            r["um"] * k, r["vm"] * k, r["re"], r["im"], 2 * sigma, r["f"]))

# A tab-separated export with the opposite exponent sign.
with open("example-sign.tsv", "w") as out:
    out.write("# label: example, sign +1 export\n# freq: 230e9\n# sign: +1\n")
    out.write("u\tv\tre\tim\tweight\n")
    for r in rows[:40]:
        k = r["f"] / C
        out.write("%.3f\t%.3f\t%.7e\t%.7e\t%.1f\n" % (r["um"] * k, r["vm"] * k, r["re"], -r["im"], 1 / sigma ** 2))
