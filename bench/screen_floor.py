"""A reference for `make bench`, not a baseline: polars alone reading the screen's file and
writing a table of the same shape (the input's cells and the screen's eleven columns) with
nothing computed, through its streaming engine. No screen can be faster than reading and
writing its own output, so this bounds the speed-up any implementation could show here.
(The streaming engine's read-ahead grows with the file; the screen reads in pieces instead.)
Usage: python bench/screen_floor.py SRC DST"""

import sys

import polars as pl


def main(src: str, dst: str) -> None:
    # full-length numbers, as the screen writes (a square root has all 17 digits)
    number = pl.col("estimate").cast(pl.Float64, strict=False).sqrt()
    floats = ["rr", "rr_lower", "rr_upper", "evalue", "evalue_ci"]
    empty = ["partial_r2", "robustness_value", "robustness_value_alpha"]
    (
        pl.scan_csv(src, infer_schema=False)
        .with_columns(
            pl.col("scale").alias("scale_used"),
            *(number.alias(name) for name in floats),
            *(pl.lit(None, pl.Float64).alias(name) for name in empty),
            pl.lit("").alias("error"),
            pl.lit("").alias("notes"),
        )
        .sink_csv(dst)
    )


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2])
