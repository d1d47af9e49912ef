"""A reference for `make bench`, not a baseline: polars alone reading the screen's file and
writing a table of the same shape and about the same size (the input's cells, what was read,
and the screen's eleven columns, each column of the screen's type, within 5% of its bytes)
with nothing computed, through its streaming engine. No screen can be faster than reading and
writing its own output, so this bounds the speed-up any implementation could show here. (The
streaming engine's read-ahead grows with the file; the screen reads in pieces instead.) DST's
extension picks the format: .csv, .parquet, or .json (rows as NDJSON, polars' fastest JSON
writer).
Usage: python bench/screen_floor.py SRC DST"""

import sys

import polars as pl


def main(src: str, dst: str) -> None:
    def number(name: str) -> pl.Expr:
        return pl.col(name).cast(pl.Float64, strict=False)

    def as_read_or_long(name: str) -> pl.Expr:  # as the screen: kept where no conversion
        kept = (pl.col("scale") == "rr") | (pl.col("outcome") == "rare")
        return pl.when(kept).then(number(name)).otherwise(number(name).sqrt())

    empty = ["partial_r2", "robustness_value", "robustness_value_alpha"]
    frame = pl.scan_csv(src, infer_schema=False).with_columns(
        # what was read, beside the input, with the screen's types: the scale as text, the
        # numbers as numbers (as the screen writes them), no level
        pl.col("scale").alias("as_read_scale"),
        *(number(name).alias(f"as_read_{name}") for name in ("estimate", "lower", "upper")),
        pl.lit(None, pl.Float64).alias("as_read_level"),
        pl.col("outcome").alias("as_read_outcome"),
        pl.col("scale").alias("scale_used"),
        # the limits as read, and full-length numbers where the screen computes them (a
        # square root has all 17 digits): about the screen's own bytes
        as_read_or_long("estimate").alias("rr"),
        as_read_or_long("lower").alias("rr_lower"),
        as_read_or_long("upper").alias("rr_upper"),
        number("estimate").sqrt().alias("evalue"),
        number("lower").sqrt().alias("evalue_ci"),
        *(pl.lit(None, pl.Float64).alias(name) for name in empty),
        pl.lit("").alias("error"),
        pl.lit("").alias("notes"),
    )
    if dst.endswith(".parquet"):
        frame.sink_parquet(dst)
    elif dst.endswith(".json"):
        frame.sink_ndjson(dst)
    else:
        frame.sink_csv(dst)


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2])
