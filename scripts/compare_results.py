"""Compare two results.json files number by number (before/after a change).

Usage: ``python scripts/compare_results.py OLD/results.json NEW/results.json``

Prints every key path whose value differs (timing and path keys, which change
from run to run, are left out) and exits 1 when any number differs, 0 when the
two runs agree bit for bit. Used to show that a restructuring left results
unchanged.
"""
import json
import sys

#: keys that differ between two runs of the same case for reasons other than results
VOLATILE = {"wall_time_s", "path", "date", "created", "elapsed_s", "case_sha256", "slipfield_version", "started_utc"}


def differences(a, b, path=""):
    if isinstance(a, dict) and isinstance(b, dict):
        for k in sorted(set(a) | set(b)):
            if k in VOLATILE:
                continue
            if k not in a or k not in b:
                yield f"{path}/{k}", "only in " + ("new" if k in b else "old")
            else:
                yield from differences(a[k], b[k], f"{path}/{k}")
    elif isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            yield path, f"length {len(a)} != {len(b)}"
        for i, (u, v) in enumerate(zip(a, b)):
            yield from differences(u, v, f"{path}[{i}]")
    elif a != b:
        yield path, f"{a!r:.60} != {b!r:.60}"


def main(argv):
    old, new = (json.load(open(p, encoding="utf-8")) for p in argv[1:3])
    rows = list(differences(old, new))
    for p, what in rows:
        print(f"{p}: {what}")
    print(f"{len(rows)} differences")
    return 1 if rows else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
