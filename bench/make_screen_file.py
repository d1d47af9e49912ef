"""A large invented table of published results for `make bench` (mixed ratio scales, 0.1%
malformed cells). Usage: python bench/make_screen_file.py ROWS PATH"""

import sys

import numpy as np


def main(rows: int, path: str) -> None:
    rng = np.random.default_rng(1)
    with open(path, "w") as fh:
        fh.write("study,scale,estimate,lower,upper,outcome\n")
        for start in range(0, rows, 200_000):
            n = min(200_000, rows - start)
            est = np.exp(rng.normal(0.2, 0.3, n))
            half = rng.uniform(0.05, 0.4, n)
            scale = rng.choice(["rr", "or", "hr"], n)
            freq = rng.choice(["rare", "common"], n)
            lines = []
            for i in range(n):
                e = f"{est[i]:.3f}"
                if rng.random() < 0.001:
                    e = '"1,5"'
                lines.append(
                    f"s{start + i},{scale[i]},{e},{est[i] * np.exp(-half[i]):.3f},"
                    f"{est[i] * np.exp(half[i]):.3f},{freq[i]}\n"
                )
            fh.write("".join(lines))


if __name__ == "__main__":
    main(int(sys.argv[1]), sys.argv[2])
