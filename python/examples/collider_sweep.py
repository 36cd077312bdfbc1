#!/usr/bin/env python3
"""Sweep the dilution of the collider demo and print the drains' cross-correlation signal-to-noise.

The two source constrictions QA and QB of designs/02_two_source_collider.yaml set how much of each
source's bias reaches the collider C (their gates set their transmission; here the transmission is
changed directly, by the key path `hallway sweep --vary` uses). For each value the script prints the
current arriving at the collider, its generalised Fano factor P (docs/models.md, "Anyon collider"), the
D1-D2 cross-correlation SNR and the averaging time for the target. With matplotlib installed and
--plot FILE given, it also draws SNR against the transmission.

    PYTHONPATH=build/python python3 python/examples/collider_sweep.py [DESIGN.yaml] [--plot snr.png]

The numbers are model estimates (bare-potential edges, fast=True); see docs/models.md.
"""

import argparse
import pathlib

import hallway

DEMO = pathlib.Path(__file__).resolve().parents[2] / "designs" / "02_two_source_collider.yaml"


def hours(seconds):
    return "no signal" if seconds is None else f"{seconds / 3600:.3g} h"


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("design", nargs="?", default=str(DEMO), help="the collider design (default: the demo)")
    parser.add_argument("--plot", help="draw SNR against the transmission into this PNG (needs matplotlib)")
    args = parser.parse_args()

    design = hallway.Design.from_file(args.design)
    transmissions = [0.99, 0.97, 0.95, 0.92, 0.9]
    snr = []
    print(f"{'T(QA,QB)':>9} {'I1 at C':>10} {'P':>7} {'SNR D1-D2':>10} {'time for target':>16}")
    for t in transmissions:
        design.set("constrictions.QA.transmission", t)
        design.set("constrictions.QB.transmission", t)
        r = hallway.noise(design, fast=True)
        cross, collider = r.cross_correlations[0], r.colliders[0]
        p = "n/a" if collider.P is None else f"{collider.P:.3g}"
        print(f"{t:9.2f} {collider.I1_A * 1e12:7.2f} pA {p:>7} {cross.snr:10.3g} {hours(cross.time_for_target_s):>16}")
        snr.append(cross.snr)
    if args.plot:
        try:
            import matplotlib
        except ImportError:
            print("matplotlib is not installed: no plot drawn")
            return
        matplotlib.use("Agg")
        import matplotlib.pyplot as plt

        fig, ax = plt.subplots(figsize=(5, 3.5))
        ax.plot(transmissions, snr, "o-")
        ax.set_xlabel("transmission of QA and QB")
        ax.set_ylabel("cross-correlation SNR, D1-D2")
        ax.set_title("collider demo (model estimate)")
        fig.tight_layout()
        fig.savefig(args.plot, dpi=120)
        print(f"plot: {args.plot}")


if __name__ == "__main__":
    main()
