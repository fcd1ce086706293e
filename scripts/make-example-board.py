#!/usr/bin/env python3
"""Writes the Gerber X2 files of the invented example board (examples/board/*.gbr).

A 60 x 40 mm two-layer board for the Class II wall adapter of examples/class2-adapter.toml,
invented for gapwarden (not a real product): mains inlet on the left, primary in the middle
left, the transformer T1 straddling a milled slot, the secondary and the output connector on
the right. Every copper object carries its net (%TO.N); the bottom holds two pours, the
primary one with a clear-polarity cut-out round a pad of another net. Run from the
repository root:

    python3 scripts/make-example-board.py

The output is reproducible: the same files, byte for byte, on every run.
"""

import os

OUT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "examples", "board")


def coord(mm):
    return str(int(round(mm * 1_000_000)))


class Gerber:
    def __init__(self, function, comment):
        self.lines = [
            f"G04 gapwarden example board: {comment}*",
            "%TF.GenerationSoftware,gapwarden,make-example-board.py,1*%",
            f"%TF.FileFunction,{function}*%",
            "%FSLAX46Y46*%",
            "%MOMM*%",
            "%LPD*%",
            "G75*",
        ]
        self.apertures = {}
        self.current = None

    def aperture(self, spec):
        if spec not in self.apertures:
            code = 10 + len(self.apertures)
            self.apertures[spec] = code
            self.lines.append(f"%ADD{code}{spec}*%")
        code = self.apertures[spec]
        if self.current != code:
            self.lines.append(f"D{code}*")
            self.current = code

    def net(self, name):
        self.lines.append(f"%TO.N,{name}*%")

    def end_net(self):
        self.lines.append("%TD*%")

    def flash(self, net, spec, x, y):
        self.aperture(spec)
        if net:
            self.net(net)
        self.lines.append(f"X{coord(x)}Y{coord(y)}D03*")
        if net:
            self.end_net()

    def track(self, net, width, points):
        self.aperture(f"C,{width}")
        if net:
            self.net(net)
        (x, y), rest = points[0], points[1:]
        self.lines.append("G01*")
        self.lines.append(f"X{coord(x)}Y{coord(y)}D02*")
        for x, y in rest:
            self.lines.append(f"X{coord(x)}Y{coord(y)}D01*")
        if net:
            self.end_net()

    def region(self, net, points):
        self.net(net)
        self.lines.append("G36*")
        self.lines.append("G01*")
        (x, y), rest = points[0], points[1:]
        self.lines.append(f"X{coord(x)}Y{coord(y)}D02*")
        for x, y in rest + [points[0]]:
            self.lines.append(f"X{coord(x)}Y{coord(y)}D01*")
        self.lines.append("G37*")
        self.end_net()

    def clear(self, spec, x, y):
        self.lines.append("%LPC*%")
        self.aperture(spec)
        self.lines.append(f"X{coord(x)}Y{coord(y)}D03*")
        self.lines.append("%LPD*%")

    def write(self, name):
        with open(os.path.join(OUT, name), "w", newline="\n") as f:
            f.write("\n".join(self.lines + ["M02*"]) + "\n")


# Through-hole pads: (net, x, y, pad diameter, hole diameter). On both copper layers, and
# plated holes in the drill file.
THT = [
    # J1 mains inlet
    ("AC_L", 4.0, 14.0, 2.6, 1.3),
    ("AC_N", 4.0, 26.0, 2.6, 1.3),
    # F1 fuse
    ("AC_L", 10.0, 14.0, 2.0, 1.0),
    ("AC_LF", 16.0, 14.0, 2.0, 1.0),
    # BR1 bridge inputs
    ("AC_LF", 20.0, 14.0, 2.0, 1.0),
    ("AC_N", 20.0, 22.0, 2.0, 1.0),
    # C1 bulk capacitor
    ("HV+", 14.0, 30.2, 2.0, 1.0),
    ("HV-", 14.0, 35.2, 2.0, 1.0),
    # T1 transformer: primary pins left of the slot, secondary right of it
    ("HV+", 24.5, 12.0, 2.0, 1.0),
    ("SW", 24.5, 17.0, 2.0, 1.0),
    ("AUX", 24.5, 22.0, 2.0, 1.0),
    ("HV-", 24.5, 27.0, 2.0, 1.0),
    ("SEC_A", 32.5, 14.0, 2.0, 1.0),
    ("GND_OUT", 32.5, 26.0, 2.0, 1.0),
    # CY1 Y1 capacitor, 10 mm lead pitch
    ("HV-", 23.5, 36.5, 1.8, 0.9),
    ("GND_OUT", 33.5, 36.5, 1.8, 0.9),
    # D2 output rectifier
    ("SEC_A", 40.0, 14.0, 2.0, 1.0),
    ("VOUT", 46.0, 14.0, 2.0, 1.0),
    # J2 output connector
    ("VOUT", 56.0, 17.0, 2.6, 1.3),
    ("GND_OUT", 56.0, 23.0, 2.6, 1.3),
]

# U3 optocoupler (surface mount, wide body: 10.16 mm between the pad rows), top only.
SMD = [
    ("FB", 23.42, 4.0, "R,1.6X1.6"),
    ("HV-", 23.42, 6.54, "R,1.6X1.6"),
    ("OPTO_A", 33.58, 4.0, "R,1.6X1.6"),
    ("VOUT", 33.58, 6.54, "R,1.6X1.6"),
]

TRACKS_TOP = [
    ("AC_L", 1.0, [(4.0, 14.0), (10.0, 14.0)]),
    ("AC_LF", 1.0, [(16.0, 14.0), (20.0, 14.0)]),
    # Line-side neutral past the bulk capacitor's positive pad: the input-bulk gap.
    ("AC_N", 1.0, [(4.0, 26.0), (17.0, 26.0), (20.0, 22.0)]),
    ("SEC_A", 1.0, [(32.5, 14.0), (40.0, 14.0)]),
    ("VOUT", 1.0, [(46.0, 14.0), (52.0, 14.0), (56.0, 17.0)]),
    ("GND_OUT", 1.0, [(32.5, 26.0), (52.0, 26.0), (56.0, 23.0)]),
    ("OPTO_A", 0.5, [(33.58, 4.0), (40.0, 4.0)]),
    ("VOUT", 0.5, [(33.58, 6.54), (46.0, 6.54), (46.0, 14.0)]),
]


def copper(function, side):
    g = Gerber(function, f"{side} copper")
    for net, x, y, d, _ in THT:
        g.flash(net, f"C,{d}", x, y)
    if side == "top":
        for net, x, y, spec in SMD:
            g.flash(net, spec, x, y)
        for net, w, pts in TRACKS_TOP:
            g.track(net, w, pts)
    else:
        # Primary pour (HV-) under the bulk capacitor, cut clear round C1's HV+ pad, whose
        # own pad is flashed again after the cut-out.
        g.region("HV-", [(11.0, 31.0), (22.0, 31.0), (22.0, 38.5), (11.0, 38.5)])
        g.clear("C,3.6", 14.0, 30.2)
        g.flash("HV+", "C,2.0", 14.0, 30.2)
        # Secondary pour (GND_OUT).
        g.region("GND_OUT", [(37.0, 29.0), (58.0, 29.0), (58.0, 38.0), (37.0, 38.0)])
    return g


def outline():
    # 60 x 40 mm with corners rounded to 2 mm, drawn counter-clockwise with G03 arcs.
    g = Gerber("Profile,NP", "board outline")
    g.aperture("C,0.1")
    r, w, h = 2.0, 60.0, 40.0
    lines = g.lines
    lines.append(f"X{coord(r)}Y{coord(0)}D02*")
    lines.append("G01*")
    lines.append(f"X{coord(w - r)}Y{coord(0)}D01*")
    lines.append("G03*")
    lines.append(f"X{coord(w)}Y{coord(r)}I{coord(0)}J{coord(r)}D01*")
    lines.append("G01*")
    lines.append(f"X{coord(w)}Y{coord(h - r)}D01*")
    lines.append("G03*")
    lines.append(f"X{coord(w - r)}Y{coord(h)}I{coord(-r)}J{coord(0)}D01*")
    lines.append("G01*")
    lines.append(f"X{coord(r)}Y{coord(h)}D01*")
    lines.append("G03*")
    lines.append(f"X{coord(0)}Y{coord(h - r)}I{coord(0)}J{coord(-r)}D01*")
    lines.append("G01*")
    lines.append(f"X{coord(0)}Y{coord(r)}D01*")
    lines.append("G03*")
    lines.append(f"X{coord(r)}Y{coord(0)}I{coord(r)}J{coord(0)}D01*")
    return g


def plated():
    g = Gerber("Plated,1,2,PTH", "plated holes")
    for net, x, y, _, hole in THT:
        g.flash(net, f"C,{hole}", x, y)
    return g


def non_plated():
    g = Gerber("NonPlated,1,2,NPTH,Rout", "milled slot and mounting holes")
    # The slot under T1: 1.5 mm wide (wider than X = 1.0 mm in pollution degree 2).
    g.track(None, 1.5, [(28.5, 7.0), (28.5, 33.0)])
    g.flash(None, "C,3.2", 3.5, 36.5)
    g.flash(None, "C,3.2", 56.5, 3.5)
    return g


def main():
    os.makedirs(OUT, exist_ok=True)
    copper("Copper,L1,Top", "top").write("top.gbr")
    copper("Copper,L2,Bot", "bottom").write("bottom.gbr")
    outline().write("outline.gbr")
    plated().write("pth.gbr")
    non_plated().write("npth.gbr")


if __name__ == "__main__":
    main()
