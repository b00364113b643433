"""Parse-only: read the ledger CSV into a pandas DataFrame and do nothing else.

This is the floor every command that reads a CSV ledger stands on: a process that starts Python,
imports pandas and parses the file. The benchmarks divide the time and peak memory of scorewright's
commands by this process's, pair by pair.

Run ``python benchmarks/parse_only.py LEDGER.csv [--engine c|pyarrow]``; it prints
``{"rows": ..., "columns": ..., "engine": ...}`` on stdout.
"""

import argparse
import json

import pandas as pd

ENGINES = ("c", "pyarrow")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("ledger")
    parser.add_argument("--engine", choices=ENGINES, default="c")
    args = parser.parse_args(argv)
    frame = pd.read_csv(args.ledger, engine=args.engine)
    print(json.dumps({"rows": len(frame), "columns": frame.shape[1], "engine": args.engine}))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
