"""The floor of `bench.py export`: the tipping grid of GRID_ARGS computed by the library,
then written by general-purpose libraries alone. Usage: tipping_floor.py json|csv OUT [rows]

json: orjson writes the numpy columns (one list a column). With `rows`, the floor of issue
26: the same numbers, and beside them the rows' fixed text (keys, braces, brackets), the head
and the tail, so the file has the size of ours; only putting each row together is left out.
csv: pyarrow's CSV writer over the same columns.
"""

import sys

import numpy as np

from sensitivity.tipping import binary_confounder_grid, parse_range

g = binary_confounder_grid(
    "rr",
    1.8,
    (1.2, 2.7),
    prevalence_treated=parse_range("0.001:1:0.001", "p"),
    prevalence_control=0.2,
    outcome_effect=parse_range("1.01:11:0.01", "g"),
)
cols = g.columns()


def fixed(spec: list) -> str:
    """A row's text without its values and commas (the numbers' lists bring as many)."""
    return "{" + "".join(
        '"' + k + '":' + (fixed(v) if isinstance(v, list) else "[]" if isinstance(v, tuple) else "")
        for k, v in spec
    ) + "}"  # fmt: skip


if sys.argv[1] == "json":
    import orjson

    with open(sys.argv[2], "wb") as fh:
        fh.write(
            orjson.dumps(
                {k: np.ascontiguousarray(v) for k, v in cols.items()},
                option=orjson.OPT_SERIALIZE_NUMPY,
            )
        )
        if sys.argv[3:] == ["rows"]:
            row = fixed(g.row_layout()).encode()
            block = row * 65_536
            n = len(cols["reaches_target"])
            for start in range(0, n, 65_536):
                fh.write(block if n - start >= 65_536 else row * (n - start))
            fh.write(orjson.dumps(g.json_head()))
            fh.write(orjson.dumps(g.document().sentences))
else:
    import pyarrow as pa
    import pyarrow.csv as pacsv

    pacsv.write_csv(pa.table(cols), sys.argv[2])
