#!/usr/bin/env python3
"""Generate inventories/lab-stock.csv: the invented stock of a test lab (demo data only).

Deterministic: a fixed-seed 64-bit LCG (constants from Knuth's MMIX, from memory) instead of
Python's `random`, so every Python 3 writes the same bytes. Run from anywhere:

    python3 inventories/tools/gen_lab_stock.py          # rewrites inventories/lab-stock.csv
    python3 inventories/tools/gen_lab_stock.py --stdout # prints it instead

The unit tests in src/stock/inventory.rs load the result and check its counts, so after changing
this script, regenerate the file and update the counts there.
"""

import sys
from decimal import Decimal
from pathlib import Path

# IEC 60063 significant figures (from memory; E96 equals round(100 * 10**(i/96)) for every i).
E6 = [10, 15, 22, 33, 47, 68]
E12 = [10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82]
E24 = [10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30,
       33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91]
E96 = [round(100 * 10 ** (i / 96)) for i in range(96)]


class Lcg:
    """x <- a*x + c mod 2^64; the top 53 bits give a float in [0, 1)."""

    def __init__(self, seed):
        self.x = seed

    def random(self):
        self.x = (6364136223846793005 * self.x + 1442695040888963407) % 2**64
        return (self.x >> 11) / 2**53

    def between(self, lo, hi):
        """Integer in [lo, hi]."""
        return lo + int(self.random() * (hi - lo + 1))

    def chance(self, p):
        return self.random() < p

    def code(self, n):
        alphabet = "23456789ABCDEFGHJKLMNPQRSTUVWXYZ"  # no 0/O, 1/I: typed by hand
        return "".join(alphabet[self.between(0, len(alphabet) - 1)] for _ in range(n))


RNG = Lcg(20240611)


def spell(value, prefixes, unit):
    """Exact decimal value -> '4.7k' / '100nF': the largest prefix that keeps it >= 1."""
    for factor, prefix in prefixes:
        if value >= factor:
            scaled = (value / factor).normalize()
            text = format(scaled, "f")
            return f"{text}{prefix}{unit}"
    raise ValueError(value)


OHM_PREFIXES = [(Decimal(10) ** 6, "M"), (Decimal(10) ** 3, "k"), (Decimal(1), "")]
# Capacitances are carried in picofarads.
PF_PREFIXES = [(Decimal(10) ** 6, "u"), (Decimal(10) ** 3, "n"), (Decimal(1), "p")]


def decade_values(series, digits, first_exp, last_exp, top=True):
    """series mantissas (of `digits` figures) times 10**e for e in [first_exp, last_exp]."""
    out = []
    for e in range(first_exp, last_exp + 1):
        for m in series:
            out.append(Decimal(m).scaleb(e - (digits - 1)))
    if top:
        out.append(Decimal(1).scaleb(last_exp + 1))
    return out


class Bins:
    """Sequential bins: PREFIX-cabinet-drawer, 24 drawers per cabinet."""

    def __init__(self, prefix):
        self.prefix, self.n = prefix, 0

    def next(self):
        cab, drawer = divmod(self.n, 24)
        self.n += 1
        return f"{self.prefix}-{cab + 1:02d}-{drawer + 1:02d}"


def qty(lo, hi, step, p_zero=0.05):
    if RNG.chance(p_zero):
        return 0
    return min(500, step * RNG.between(lo // step, hi // step))


def resistor_lines():
    bins = Bins("R")
    rows = []
    # E24 1 % at 0.25 W, 10 ohm .. 10 Mohm (exponent 1 = the 10..91 decade).
    for v in decade_values(E24, 2, 1, 6):
        if RNG.chance(0.04):
            continue  # a realistic gap: used up and never reordered
        rows.append(("resistor", spell(v, OHM_PREFIXES, ""), "1%", qty(20, 500, 10), "", "0.25W",
                     "false", "metal film", f"{0.012 + 0.008 * RNG.random():.3f}", bins.next(), ""))
    # E24 1 % at 0.125 W, 10 ohm .. 1 Mohm: the same values in the small size.
    for v in decade_values(E24, 2, 1, 5):
        if RNG.chance(0.04):
            continue
        rows.append(("resistor", spell(v, OHM_PREFIXES, ""), "1%", qty(50, 500, 50), "", "0.125W",
                     "false", "thick film", f"{0.006 + 0.004 * RNG.random():.3f}", bins.next(), ""))
    # E96 0.1 % at 0.125 W, 1 kohm .. 100 kohm, for gain-setting pairs.
    for v in decade_values(E96, 3, 3, 4):
        if RNG.chance(0.10):
            continue
        n = qty(5, 100, 5)
        note = "reorder" if n == 0 else ("kept for the calibration jig" if RNG.chance(0.04) else "")
        rows.append(("resistor", spell(v, OHM_PREFIXES, ""), "0.1%", n, "", "0.125W",
                     "false", "thin film", f"{0.28 + 0.17 * RNG.random():.2f}", bins.next(), note))
    return rows


def capacitor_lines():
    bins = Bins("C")
    rows = []

    def add(pf, tol, n, volts, polar, dielectric, cost, note=""):
        rows.append(("capacitor", spell(pf, PF_PREFIXES, "F"), tol, n, f"{volts}V", "",
                     polar, dielectric, cost, bins.next(), note))

    # C0G 5 %, 10 pF .. 10 nF (E12), 50 V; the small values also at 100 V.
    for pf in decade_values(E12, 2, 1, 3):
        volts = 100 if pf <= 100 and RNG.chance(0.3) else 50
        add(pf, "5%", qty(20, 400, 10), volts, "false", "C0G", f"{0.04 + 0.08 * RNG.random():.2f}")
    # X7R 10 %, 1 nF .. 2.2 uF (E6), 50 V up to 470 nF, 25 V above.
    for pf in decade_values(E6, 2, 3, 5, top=False) + [Decimal(10) ** 6, Decimal(1500000),
                                                        Decimal(2200000)]:
        volts = 50 if pf <= 470000 else 25
        add(pf, "10%", qty(50, 500, 50), volts, "false", "X7R", f"{0.03 + 0.2 * RNG.random():.2f}")
    # Film 5 %, 1 nF .. 10 uF (E6): 250 V to 100 nF, 100 V to 1 uF, 63 V above.
    for pf in decade_values(E6, 2, 3, 6):
        volts = 250 if pf <= 100000 else (100 if pf <= 10 ** 6 else 63)
        add(pf, "5%", qty(5, 100, 5), volts, "false", "film", f"{0.20 + 1.3 * RNG.random():.2f}")
    # Aluminium electrolytic 20 %, 1 uF .. 4700 uF, ratings as a lab would hold them.
    ratings = {
        1: [50, 63, 100], 2.2: [50, 63], 3.3: [50], 4.7: [35, 50, 63],
        10: [16, 25, 35, 50, 63], 22: [16, 25, 35, 50], 33: [25, 35],
        47: [10, 16, 25, 35, 50], 100: [10, 16, 25, 35, 50, 63], 220: [10, 16, 25, 35, 50],
        330: [16, 25, 35], 470: [10, 16, 25, 35, 50], 1000: [10, 16, 25, 35],
        2200: [10, 16, 25], 3300: [16, 25], 4700: [10, 16, 25],
    }
    for uf, volts_list in ratings.items():
        pf = Decimal(str(uf)) * 10 ** 6
        for volts in volts_list:
            size = float(uf) * volts  # C·V grows with can size, and so does the price
            cost = 0.05 + size / 40000 + 0.05 * RNG.random()
            add(pf, "20%", qty(5, 200, 5), volts, "true", "electrolytic", f"{cost:.2f}")
    return rows


def main():
    out = ["# Invented test-lab stock, for demos only. Generated by inventories/tools/gen_lab_stock.py;",
           "# edit the script, not this file. supplier_ref is the lab's own column (ignored by stockfit).",
           "kind,value,tolerance,qty,voltage,power,polarized,dielectric,unit_cost,location,supplier_ref,note"]

    def emit(rows):
        for kind, value, tol, n, volts, watts, polar, diel, cost, loc, note in rows:
            ref = f"SR-{RNG.code(5)}"
            out.append(",".join([kind, value, tol, str(n), volts, watts, polar, diel, cost, loc,
                                 ref, note]))

    emit(resistor_lines())
    out.append("# capacitors")
    emit(capacitor_lines())
    text = "\n".join(out) + "\n"
    if "--stdout" in sys.argv[1:]:
        sys.stdout.write(text)
    else:
        path = Path(__file__).resolve().parent.parent / "lab-stock.csv"
        path.write_text(text, encoding="utf-8", newline="\n")


if __name__ == "__main__":
    main()
