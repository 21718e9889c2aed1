#!/usr/bin/env python3
"""Write a synthetic hardware monorepo of DEMO stackup files for benchmarks.

Usage: synth-monorepo.py OUT_DIR [--files N] [--seed S]
       synth-monorepo.py OUT_FILE --single LAYERS CLASSES [--seed S]

Every file is invented demo data (marked so at its top), valid against
schema/stackup.schema.json. Boards have 4 to 24 copper layers and 10 to 40
net classes. A real repository repeats geometry: boards of one product
family share a build and the same few routing rules. The mix here, chosen
by us (common practice, no source), is:

- 60 % of boards reuse one of 40 family builds (layer count, plies,
  copper), 40 % get a build of their own;
- 50 % of net classes are one of the family's 12 standard classes
  (structure, layer, width, spacing or gap, target, frequency), 50 % are
  drawn fresh (widths on a 5 um grid, spacings and gaps on a 10 um grid,
  one of five frequencies).

Standard library only; the same seed writes the same bytes.
"""

import argparse
import os
import random

PLIES = ["0.075 mm", "0.1 mm", "0.127 mm", "0.15 mm", "0.2 mm", "0.25 mm"]
COPPER = ["17 um", "35 um"]
FREQS = ["1 GHz", "5 GHz", "10 GHz", "14 GHz", "28 GHz"]
FOILS = ["hvlp", "rtf", "std-ed"]

LIBRARY = """# DEMO DATA: generic material classes invented for the stackup-lint
# benchmarks. Not vendor data.
stackup-lint-materials: 1
notes: demo library of the synthetic benchmark repository
materials:
  bench-core:
    class: FR-4 class epoxy/glass
    dk: 4.10
    df: 0.016
    frequency: 1 GHz
    valid-from: 100 MHz
    valid-to: 10 GHz
    method: resonator
  bench-prepreg:
    class: FR-4 class epoxy/glass, resin rich
    dk: 3.90
    df: 0.018
    frequency: 1 GHz
    valid-from: 100 MHz
    valid-to: 10 GHz
    method: resonator
  bench-low-loss:
    class: low-loss epoxy blend/glass
    dk: 3.40
    df: 0.005
    frequency: 10 GHz
    valid-from: 1 GHz
    valid-to: 30 GHz
    method: resonator
  bench-mask:
    class: liquid photoimageable solder mask
    dk: 3.6
    df: 0.025
    frequency: 1 GHz
    method: unknown
foils:
  hvlp:
    rz: 2.0 um
    rq: 0.4 um
  rtf:
    rz: 5.0 um
    rq: 1.2 um
  std-ed:
    rz: 8.0 um
    rq: 2.2 um
"""


def roles(n):
    """Copper roles top to bottom: outer signals, inner signals between planes."""
    r = ["signal", "plane"]
    for i in range(3, n - 1):
        r.append("signal" if i % 2 == 1 else "plane")
    r += ["plane", "signal"]
    return r[:n]


def make_build(rng, n):
    plies = []
    for i in range(n - 1):
        kind = "core" if i % 2 == 0 else "prepreg"
        mat = rng.choice(["bench-low-loss", "bench-core" if kind == "core" else "bench-prepreg"])
        plies.append((kind, mat, rng.choice(PLIES)))
    copper = [rng.choice(COPPER) for _ in range(n)]
    foil = rng.choice(FOILS)
    return {"n": n, "plies": plies, "copper": copper, "foil": foil}


def make_class(rng, build):
    r = roles(build["n"])
    signals = [i for i, x in enumerate(r) if x == "signal"]
    layer = rng.choice(signals)
    outer = layer in (0, build["n"] - 1)
    if outer:
        structure = rng.choice(["microstrip", "diff-microstrip", "grounded-coplanar"])
    else:
        structure = rng.choice(["stripline", "diff-stripline"])
    c = {
        "structure": structure,
        "layer": f"L{layer + 1}",
        "width": rng.randrange(16, 61) * 5,  # um
        "freq": rng.choice(FREQS),
    }
    if structure.startswith("diff"):
        c["spacing"] = rng.randrange(10, 31) * 10
        c["target"] = rng.choice([85, 90, 100])
    else:
        c["target"] = rng.choice([45, 50, 55])
    if structure == "grounded-coplanar":
        c["gap"] = rng.randrange(10, 26) * 10
    return c


def render(name, build, classes, library):
    n = build["n"]
    r = roles(n)
    out = [
        f"# DEMO DATA: synthetic {n}-layer board for the stackup-lint benchmarks.",
        "stackup-lint: 1",
        f"board: {name}",
    ]
    if library:
        out += ["libraries:", f"  - {library}"]
    out += ["", "layers:",
            "  - name: mask-top",
            "    dielectric: {kind: solder-mask, material: bench-mask, thickness: 15 um}"]
    foil = build["foil"]
    for i in range(n):
        out += [f"  - name: L{i + 1}", "    copper:", f"      role: {r[i]}",
                f"      thickness: {build['copper'][i]}"]
        if i > 0:
            out.append(f"      up: {{side: treated, foil: {foil}}}")
        if i < n - 1:
            out.append(f"      down: {{side: treated, foil: {foil}}}")
        if i < n - 1:
            kind, mat, t = build["plies"][i]
            out += [f"  - name: d{i + 1}",
                    f"    dielectric: {{kind: {kind}, material: {mat}, thickness: {t}}}"]
    out += ["  - name: mask-bottom",
            "    dielectric: {kind: solder-mask, material: bench-mask, thickness: 15 um}",
            "", "net-classes:"]
    for k, c in enumerate(classes):
        out += [f"  - name: class-{k + 1}", f"    structure: {c['structure']}",
                f"    layer: {c['layer']}", f"    width: {c['width']} um"]
        if "spacing" in c:
            out.append(f"    spacing: {c['spacing']} um")
        if "gap" in c:
            out.append(f"    gap: {c['gap']} um")
        out += [f"    impedance: {{target: {c['target']} ohm, tolerance: 10 %}}",
                f"    max-frequency: {c['freq']}"]
    return "\n".join(out) + "\n"


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("out")
    ap.add_argument("--files", type=int, default=1000)
    ap.add_argument("--seed", type=int, default=20261202)
    ap.add_argument("--single", type=int, nargs=2, metavar=("LAYERS", "CLASSES"))
    a = ap.parse_args()
    rng = random.Random(a.seed)
    if a.single:
        n, k = a.single
        build = make_build(rng, n)
        classes = [make_class(rng, build) for _ in range(k)]
        os.makedirs(os.path.dirname(os.path.abspath(a.out)), exist_ok=True)
        lib = os.path.join(os.path.dirname(os.path.abspath(a.out)), "bench.materials.yaml")
        with open(lib, "w") as f:
            f.write(LIBRARY)
        with open(a.out, "w") as f:
            f.write(render(f"demo synthetic {n}-layer board", build, classes,
                           "bench.materials.yaml"))
        return
    os.makedirs(os.path.join(a.out, "materials"), exist_ok=True)
    with open(os.path.join(a.out, "materials", "bench.materials.yaml"), "w") as f:
        f.write(LIBRARY)
    families = []
    for _ in range(40):
        b = make_build(rng, rng.randrange(2, 13) * 2)
        families.append((b, [make_class(rng, b) for _ in range(12)]))
    for i in range(a.files):
        if rng.random() < 0.6:
            build, standard = rng.choice(families)
        else:
            build = make_build(rng, rng.randrange(2, 13) * 2)
            standard = []
        classes = []
        for _ in range(rng.randrange(10, 41)):
            if standard and rng.random() < 0.5:
                classes.append(rng.choice(standard))
            else:
                classes.append(make_class(rng, build))
        d = os.path.join(a.out, f"boards/b{i // 100:02d}/board-{i:04d}")
        os.makedirs(d, exist_ok=True)
        with open(os.path.join(d, "board.stackup.yaml"), "w") as f:
            f.write(render(f"demo synthetic board {i}", build, classes,
                           "../../../materials/bench.materials.yaml"))


if __name__ == "__main__":
    main()
