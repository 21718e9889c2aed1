#!/usr/bin/env python3
"""DEMO DATA generator: synthetic test-coupon measurements for the example
boards. Nothing here was measured. Each coupon is made from a known,
invented "truth":

1. the example board is copied to a temporary project, the Dk of one of its
   materials is optionally changed (the "fabricated" board differs from the
   stackup as written);
2. stackup-lint itself writes the lossy line of the net class at two lengths
   (`impedance --sweep ... --length L --touchstone DIR`);
3. scikit-rf (PyPI) adds an identical, imperfect launch at both ends of each
   line (a series inductance and a shunt capacitance, as a via and pad
   would), and a little measurement noise (seeded);
4. a resonator coupon is the line of the resonator's length with a series
   coupling capacitance at each end.

The files are written under examples/<board>/coupons/, marked as demo data
in their header. Run from the repository root after `cargo build --release`:

    python3 examples/gen_demo_coupons.py target/release/stackup-lint

Needs numpy and scikit-rf (this script installs nothing).
"""

import os
import re
import shutil
import subprocess
import sys
import tempfile

import numpy as np
import skrf

LINE_SWEEP = "0.5GHz..40GHz:400"  # 0.1 GHz steps
RESONATOR_SWEEP = "1GHz..8GHz:2801"  # 2.5 MHz steps: a few points in each peak
NOISE = 3e-5  # complex noise on every S entry, about -90 dB
RNG = np.random.default_rng(20261203)

# (board directory, net class, material whose Dk the fabricated board has
#  instead, that Dk, coupons to write)
DEMOS = [
    # The mm-wave sensor as built agrees with its stackup.
    ("radar-sensor-6l", "lo-microstrip", None, None,
     [("lo-line-25mm", 25.0), ("lo-line-100mm", 100.0), ("lo-resonator-60mm", 60.0)]),
    # The line card's outer plies were pressed from a lot with a higher Dk
    # than the stackup states: its coupon disproves the stated Dk.
    ("line-card-10l", "cal-line-28g", "low-loss-prepreg", 3.25,
     [("cal-line-25mm", 25.0), ("cal-line-100mm", 100.0)]),
]

# The launch: series inductance and shunt capacitance (invented values).
L_LAUNCH = 0.12e-9
C_LAUNCH = 0.06e-12
# Resonator ends (invented): a series gap capacitance into the launch, and
# the open end's fringing as a shunt capacitance (the field beyond the end
# of the strip, about 0.055 mm of extra line).
C_GAP = 0.02e-12
C_OPEN = 0.0059e-12


def launch(freq):
    w = 2 * np.pi * freq.f
    z = 1j * w * L_LAUNCH
    y = 1j * w * C_LAUNCH
    # ABCD of series Z then shunt Y, to S with 50 ohm ports.
    a = 1 + z * y
    b = z
    c = y
    d = np.ones_like(a)
    abcd = np.stack([np.stack([a, b], -1), np.stack([c, d], -1)], -2)
    return skrf.Network(frequency=freq, s=skrf.network.a2s(abcd, 50), name="launch")


def shunt_c(freq, cap):
    w = 2 * np.pi * freq.f
    y = 1j * w * cap
    one = np.ones_like(y)
    abcd = np.stack([np.stack([one, 0 * one], -1), np.stack([y, one], -1)], -2)
    return skrf.Network(frequency=freq, s=skrf.network.a2s(abcd, 50), name="open end")


def series_c(freq, cap):
    w = 2 * np.pi * freq.f
    z = 1 / (1j * w * cap)
    one = np.ones_like(z)
    abcd = np.stack([np.stack([one, z], -1), np.stack([0 * one, one], -1)], -2)
    return skrf.Network(frequency=freq, s=skrf.network.a2s(abcd, 50), name="gap")


def noisy(net):
    n = net.copy()
    n.s = n.s + NOISE * (RNG.standard_normal(n.s.shape) + 1j * RNG.standard_normal(n.s.shape)) / np.sqrt(2)
    return n


def engine_line(exe, project, board_rel, cls, length_mm, sweep):
    out = os.path.join(project, f"ts-{length_mm:g}")
    subprocess.run(
        [exe, "impedance", "--root", project, "--sweep", sweep, "--length", f"{length_mm} mm",
         "--touchstone", out, os.path.join(project, board_rel)],
        check=True, capture_output=True, text=True)
    return skrf.Network(os.path.join(out, f"board-{cls}.s2p"))


def write(net, path, what):
    base = os.path.splitext(path)[0]
    net.write_touchstone(base, form="ri", skrf_comment=False)
    with open(base + ".s2p") as f:
        body = f.read()
    with open(base + ".s2p", "w") as f:
        f.write(f"! DEMO DATA, not a measurement: {what}\n"
                f"! synthetic coupon written by examples/gen_demo_coupons.py\n" + body)


def main():
    exe = os.path.abspath(sys.argv[1])
    repo = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    for board, cls, material, dk, coupons in DEMOS:
        with tempfile.TemporaryDirectory() as project:
            ex = os.path.join(project, "examples")
            shutil.copytree(os.path.join(repo, "examples", board), os.path.join(ex, board))
            shutil.copytree(os.path.join(repo, "examples", "materials"), os.path.join(ex, "materials"))
            board_rel = os.path.join("examples", board, "board.stackup.yaml")
            truth = "the stackup as written"
            if material:
                path = os.path.join(project, board_rel)
                text = open(path).read()
                # Change the material's `dk:` line (the first after its name).
                pat = re.compile(rf"(\n  {re.escape(material)}:\n(?:    .*\n)*?    dk: )[0-9.]+")
                text, n = pat.subn(rf"\g<1>{dk}", text)
                assert n == 1, f"{material} not found in {board}"
                # The fabricated board has no coupons of its own yet.
                text = text.split("\ncoupons:")[0] + "\n"
                open(path, "w").write(text)
                truth = f"the board built with {material} at Dk {dk}"
            else:
                path = os.path.join(project, board_rel)
                text = open(path).read().split("\ncoupons:")[0] + "\n"
                open(path, "w").write(text)
            outdir = os.path.join(repo, "examples", board, "coupons")
            os.makedirs(outdir, exist_ok=True)
            for name, length in coupons:
                sweep = RESONATOR_SWEEP if "resonator" in name else LINE_SWEEP
                line = engine_line(exe, project, board_rel, cls, length, sweep)
                la = launch(line.frequency)
                if "resonator" in name:
                    gap = series_c(line.frequency, C_GAP)
                    end = shunt_c(line.frequency, C_OPEN)
                    net = la ** gap ** end ** line ** end ** gap ** la.flipped()
                else:
                    net = la ** line ** la.flipped()
                write(noisy(net), os.path.join(outdir, name + ".s2p"),
                      f"{cls} of {board}, {length:g} mm, {truth}")
                print(f"{board}/coupons/{name}.s2p: {truth}", file=sys.stderr)


if __name__ == "__main__":
    main()
