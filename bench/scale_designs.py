#!/usr/bin/env python3
"""Writes the two scale-test designs of bench/scale_bench.sh (invented layouts, not real samples).

  python3 bench/scale_designs.py OUT_DIR [POINTS ...]

grid500.yaml: 498 square gates of 1 um (a 25 x 20 grid at a 4 um pitch, two corners left out) and a
split gate (2 gates) on a 122 x 80 um mesa, two contacts.
finger10k.yaml: the Hall bar of designs/01_hallbar_qpc.yaml whose lower split gate is a wavy finger
with a round tip, outlined by 10,000 points (about 3 nm apart; the format asks for 1 nm at least).
finger<POINTS>.yaml: the same finger outlined by POINTS points (at most 12,000: 1 nm apart), for the growth with
the number of vertices.
"""
import math
import sys

HEAD = """hallway: 1
name: "{name}"
units: um
heterostructure: {{depth: 95 nm, density: 2.3e11 cm^-2, mobility: 2.5e6 cm^2/Vs}}
conditions: {{temperature: 15 mK, filling: 2}}
"""
AMP = """amplifier: {load: 10 kOhm, voltage_noise: 0.25 nV/rtHz, current_noise: 5 fA/rtHz, bandwidth: 200 kHz,
            integration: 20 min}
"""


def outline(points):
    return "[" + ",".join(f"[{x:.6f},{y:.6f}]" for x, y in points) + "]"


def grid500():
    lines = [HEAD.format(name="scale test: 500 gates"),
             "mesa: {outline: [[-51,-40],[71,-40],[71,40],[-51,40]], etch_depletion: 120 nm}\n",
             "contacts:\n",
             "  - {name: W, outline: [[-55,-6],[-49,-6],[-49,6],[-55,6]]}\n",
             "  - {name: E, outline: [[69,-6],[75,-6],[75,6],[69,6]]}\n",
             "gates:\n",
             "  - {name: QS, voltage: -0.8 V, outline: [[59.5,-42],[60.5,-42],[60.5,-0.4],[60,-0.15],[59.5,-0.4]]}\n",
             "  - {name: QN, voltage: -0.8 V, outline: [[59.5,42],[59.5,0.4],[60,0.15],[60.5,0.4],[60.5,42]]}\n"]
    for j in range(20):
        for i in range(25 if j < 18 else 24):
            x, y = -48.5 + 4.0 * i, -38.5 + 4.0 * j
            sq = [(x, y), (x + 1, y), (x + 1, y + 1), (x, y + 1)]
            lines.append(f"  - {{name: G{i}_{j}, voltage: -0.6 V, outline: {outline(sq)}}}\n")
    lines += ["constrictions:\n", "  - {name: Q, gates: [QS, QN], transmission: [1, 0.5]}\n",
              "wiring: {W: source 10 uV, E: ground}\n"]
    return "".join(lines)


def finger(points=10000):
    # Sides from y = -14 to y = -0.65 um, x = +-(0.5 + 0.05 sin(2 pi y / 1 um)); tip: half circle of
    # radius 0.5 um about (0, -0.65), reaching y = -0.15 um.
    side, tip = points * 9 // 20, points // 10
    pts = []
    for k in range(side):
        y = -14.0 + 13.35 * k / side
        pts.append((0.5 + 0.05 * math.sin(2 * math.pi * y), y))
    for k in range(tip):
        a = math.pi * k / tip
        pts.append((0.5 * math.cos(a), -0.65 + 0.5 * math.sin(a)))
    for k in range(side):
        y = -0.65 - 13.35 * k / side
        pts.append((-0.5 - 0.05 * math.sin(2 * math.pi * y), y))
    assert len(pts) == 2 * side + tip
    return (HEAD.format(name=f"scale test: a {len(pts)}-point gate") +
            "mesa: {outline: [[-60,-10],[60,-10],[60,10],[-60,10]], etch_depletion: 120 nm}\n"
            "contacts:\n"
            "  - {name: W,  outline: [[-70,-6],[-58,-6],[-58,6],[-70,6]]}\n"
            "  - {name: E,  outline: [[58,-6],[70,-6],[70,6],[58,6]]}\n"
            "  - {name: NE, outline: [[27,8],[33,8],[33,14],[27,14]]}\n"
            "gates:\n"
            f"  - {{name: QS, voltage: -0.8 V, outline: {outline(pts)}}}\n"
            "  - {name: QN, voltage: -0.8 V, outline: [[-0.5,14],[-0.5,0.4],[0,0.15],[0.5,0.4],[0.5,14]]}\n"
            "constrictions:\n"
            "  - {name: Q, gates: [QS, QN], transmission: [1, 0.4]}\n"
            "wiring: {W: source 10 uV, E: ground, NE: amplifier}\n" + AMP)


if __name__ == "__main__":
    out = sys.argv[1] if len(sys.argv) > 1 else "."
    jobs = [("grid500.yaml", grid500()), ("finger10k.yaml", finger())]
    jobs += [(f"finger{n}.yaml", finger(int(n))) for n in sys.argv[2:]]
    for name, text in jobs:
        with open(f"{out}/{name}", "w", encoding="utf-8") as f:
            f.write(text)
