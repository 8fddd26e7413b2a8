#!/usr/bin/python3
"""Sweep the soil resistance of the demo probe and plot the ADC input.

    sweep_plot.py [CIRCUIT] [--output sweep.png]

Prints the table; draws the curve with matplotlib when it is installed
(python3-matplotlib), and says so when it is not.
"""
import argparse
import sys

import loadstack


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("circuit", nargs="?", default="/usr/share/loadstack/circuits/demo.stack")
    ap.add_argument("--output", default="sweep.png")
    a = ap.parse_args()
    c = loadstack.Circuit.from_file(a.circuit)
    s = c.sweep("moisture_r", 1e3, 1e6, ["adc_in", "p_adc.sag"], steps=31, log=True)
    print(f"{'moisture_r (ohm)':>16} {'adc_in (V)':>11} {'p_adc sag (V)':>14}")
    for x, v, sag in zip(s.x, s.y["adc_in"], s.y["p_adc.sag"]):
        print(f"{x:>16.4g} {v:>11.4f} {sag:>14.4g}")
    try:
        import matplotlib
        matplotlib.use("Agg")
        import matplotlib.pyplot as plt
    except ImportError:
        print("matplotlib is not installed: no plot (apt install python3-matplotlib)", file=sys.stderr)
        return 0
    fig, ax = plt.subplots()
    ax.semilogx(s.x, s.y["adc_in"], label="adc_in")
    ax.semilogx(s.x, s.y["p_adc.sag"], label="sag at p_adc")
    ax.set_xlabel("moisture_r (ohm)")
    ax.set_ylabel("V")
    ax.set_title(c.title)
    ax.legend()
    fig.savefig(a.output)
    print(f"plot written to {a.output}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
