"""Read an Arrow IPC file with pyarrow, an outside Arrow reader, and print as JSON what a test of the
stream's true change points needs: the schema metadata entry shoal.changes, and, for each stretch of
`every` rows, the share of rows labelled positive among those whose f1 + f2 lies in (lo, hi].

    python read_changes.py FILE EVERY LO HI
"""

import json
import sys

import pyarrow.ipc as ipc


def main(path, every, lo, hi):
    with ipc.open_file(path) as reader:
        table = reader.read_all()
    meta = {k.decode(): v.decode() for k, v in (table.schema.metadata or {}).items()}
    f1 = table.column("f1").to_pylist()
    f2 = table.column("f2").to_pylist()
    label = [str(v) for v in table.column("label").to_pylist()]
    shares = []
    for start in range(0, len(f1), every):
        band = [label[i] for i in range(start, min(start + every, len(f1))) if lo < f1[i] + f2[i] <= hi]
        shares.append(sum(1 for v in band if v == "1") / len(band) if band else None)
    print(json.dumps({"changes": json.loads(meta.get("shoal.changes", "null")), "shares": shares}))


if __name__ == "__main__":
    main(sys.argv[1], int(sys.argv[2]), float(sys.argv[3]), float(sys.argv[4]))
