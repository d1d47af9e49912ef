"""The plain baseline for `make bench`: the same E-values over the same file, one row at a
time with the csv module and math (what a careful analyst writes without this tool)."""

import csv
import math
import sys


def evalue(rr: float) -> float:
    r = 1 / rr if rr < 1 else rr
    return r + math.sqrt(r * (r - 1))


def to_rr(scale: str, value: float, outcome: str) -> float:
    if scale == "rr" or outcome == "rare":
        return value
    if scale == "or":
        return math.sqrt(value)
    return (1 - 0.5 ** math.sqrt(value)) / (1 - 0.5 ** math.sqrt(1 / value))


def main(src: str, dst: str) -> None:
    with open(src, newline="") as fin, open(dst, "w", newline="") as fout:
        reader = csv.reader(fin)
        writer = csv.writer(fout)
        header = next(reader)
        writer.writerow(header + ["rr", "evalue", "evalue_ci", "error"])
        for row in reader:
            _, scale, est, lo, up, outcome = row
            try:
                e, lo_, up_ = float(est), float(lo), float(up)
            except ValueError:
                writer.writerow(row + ["", "", "", "estimate is not a number"])
                continue
            rr, rlo, rup = (to_rr(scale, v, outcome) for v in (e, lo_, up_))
            near = rlo if rr >= 1 else rup
            e_ci = 1.0 if rlo <= 1 <= rup else evalue(near)
            writer.writerow(row + [repr(rr), repr(evalue(rr)), repr(e_ci), ""])


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2])
