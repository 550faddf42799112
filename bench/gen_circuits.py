#!/usr/bin/python3
"""Writes the benchmark netlists of bench/run.

ladder N: a 5 V source feeding N stages; stage k is a 100 Ohm series resistor from
          node n(k-1) to n(k) and a diode from n(k) to gnd. N + 2 unknowns (N nodes,
          the source's node, the source current).
grid S:   an S x S mesh of nodes joined by 1 kOhm resistors to their right and lower
          neighbours, a diode from every node to gnd, and a 5 V source feeding the
          corner node through 10 Ohm. S*S + 2 unknowns.
Each shows three quantities (the first and last node, the source current): a report of
every node of a million-node circuit is not what anyone reads.

Usage: gen_circuits.py ladder N FILE | grid S FILE
"""

import sys

PART = ("part sig diode sat_current=2n ideality=1.9 breakdown_v=75 breakdown_i=5u\n")


def ladder(n, out):
    out.write(f'title "bench ladder {n}"\n')
    out.write(PART)
    out.write("vsource V1 src -> gnd 5\n")
    prev = "src"
    for k in range(1, n + 1):
        node = f"n{k}"
        out.write(f"resistor R{k} {prev} -> {node} 100\n")
        out.write(f"diode D{k} {node} -> gnd sig\n")
        prev = node
    out.write(f"show n1.v n{n}.v V1.i\n")


def grid(s, out):
    out.write(f'title "bench grid {s}x{s}"\n')
    out.write(PART)
    out.write("vsource V1 src -> gnd 5\n")
    out.write("resistor Rin src -> g0_0 10\n")
    for r in range(s):
        for c in range(s):
            node = f"g{r}_{c}"
            if c + 1 < s:
                out.write(f"resistor Rh{r}_{c} {node} -> g{r}_{c + 1} 1k\n")
            if r + 1 < s:
                out.write(f"resistor Rv{r}_{c} {node} -> g{r + 1}_{c} 1k\n")
            out.write(f"diode D{r}_{c} {node} -> gnd sig\n")
    out.write(f"show g0_0.v g{s - 1}_{s - 1}.v V1.i\n")


def main():
    if len(sys.argv) != 4 or sys.argv[1] not in ("ladder", "grid"):
        sys.exit(__doc__)
    kind, size, path = sys.argv[1], int(sys.argv[2]), sys.argv[3]
    with open(path, "w", encoding="utf-8") as out:
        (ladder if kind == "ladder" else grid)(size, out)


if __name__ == "__main__":
    main()
