#!/usr/bin/env python3
"""Compare two holdoff JSON outputs, ignoring timings.

Usage: tools/json_same.py A.json B.json

A key is a timing when its name is "seconds" or ends in "_seconds" or "_s" (the
glossary's suffix for seconds); its value
(a number or an object of numbers) is skipped on both sides. Everything else
must be equal: same keys in the same order, same numbers to the bit (compared
as the texts the JSON holds), same strings. Prints the first differences and
exits 1, or prints "identical apart from timings" and exits 0.
"""
import json
import sys


def is_timing(key):
    return key == "seconds" or key.endswith("_seconds") or key.endswith("_s")


def walk(a, b, path, out):
    if len(out) >= 20:
        return
    if isinstance(a, dict) and isinstance(b, dict):
        ka = [k for k in a if not is_timing(k)]
        kb = [k for k in b if not is_timing(k)]
        if ka != kb:
            out.append(f"{path}: keys differ: {sorted(set(ka) ^ set(kb)) or 'order'}")
            return
        for k in ka:
            walk(a[k], b[k], f"{path}.{k}", out)
    elif isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            out.append(f"{path}: length {len(a)} vs {len(b)}")
        for i, (x, y) in enumerate(zip(a, b)):
            walk(x, y, f"{path}[{i}]", out)
    elif type(a) is not type(b) or a != b:
        out.append(f"{path}: {a!r} vs {b!r}")


def load(path):
    # Numbers are kept as their text so a change in the last bit shows.
    with open(path) as f:
        return json.load(f, parse_float=str, parse_int=str)


def main():
    if len(sys.argv) != 3:
        sys.exit(__doc__)
    out = []
    walk(load(sys.argv[1]), load(sys.argv[2]), "$", out)
    if out:
        print("\n".join(out))
        sys.exit(1)
    print("identical apart from timings")


if __name__ == "__main__":
    main()
