#!/usr/bin/env python3
"""List Rust function and file lengths.

Usage: tools/sizes.py [--fn-min N] [--file-min N] [PATH ...]   (default: src)

Functions: every `fn` with a body, its length in lines from the `fn` line to
its closing brace, longest first, at least --fn-min lines (default 150).
Files: total lines and lines outside `#[cfg(test)]` modules, at least
--file-min lines (default 600). Strings, characters and comments are skipped
when matching braces.
"""
import argparse
import os
import re

FN = re.compile(r"^\s*(?:pub(?:\([^)]*\))?\s+)?(?:const\s+)?(?:async\s+)?(?:unsafe\s+)?"
                r"(?:extern\s+\"[^\"]*\"\s+)?fn\s+(\w+)")


def code_only(text):
    """The text with strings, chars and comments blanked (newlines kept)."""
    out = []
    i, n = 0, len(text)
    while i < n:
        c = text[i]
        if text.startswith("//", i):
            j = text.find("\n", i)
            j = n if j < 0 else j
            out.append(" " * (j - i))
            i = j
        elif text.startswith("/*", i):
            depth, j = 1, i + 2
            while j < n and depth:
                if text.startswith("/*", j):
                    depth, j = depth + 1, j + 2
                elif text.startswith("*/", j):
                    depth, j = depth - 1, j + 2
                else:
                    j += 1
            out.append(re.sub(r"[^\n]", " ", text[i:j]))
            i = j
        elif c == "r" and re.match(r'r#*"', text[i:i + 10]) and (i == 0 or not (text[i - 1].isalnum() or text[i - 1] == "_")):
            hashes = re.match(r'r(#*)"', text[i:]).group(1)
            end = text.find('"' + hashes, i + 2 + len(hashes))
            end = n if end < 0 else end + 1 + len(hashes)
            out.append(re.sub(r"[^\n]", " ", text[i:end]))
            i = end
        elif c == '"':
            j = i + 1
            while j < n and text[j] != '"':
                j += 2 if text[j] == "\\" else 1
            out.append(re.sub(r"[^\n]", " ", text[i:j + 1]))
            i = j + 1
        elif c == "'":
            m = re.match(r"'(?:\\.[^']*|[^\\'])'", text[i:i + 12])
            if m:
                out.append(" " * len(m.group(0)))
                i += len(m.group(0))
            else:
                out.append(c)
                i += 1
        else:
            out.append(c)
            i += 1
    return "".join(out)


def functions(path):
    text = open(path).read()
    code = code_only(text)
    lines = code.split("\n")
    result = []
    for idx, line in enumerate(lines):
        m = FN.match(line)
        if not m:
            continue
        depth, started = 0, False
        for j in range(idx, len(lines)):
            for ch in lines[j]:
                if ch == "{":
                    depth, started = depth + 1, True
                elif ch == "}":
                    depth -= 1
                elif ch == ";" and not started and depth == 0:
                    break
            else:
                if started and depth == 0:
                    result.append((j - idx + 1, m.group(1), idx + 1))
                    break
                continue
            break
    return result


def test_lines(path):
    """Lines inside #[cfg(test)] modules."""
    code = code_only(open(path).read()).split("\n")
    count, idx = 0, 0
    while idx < len(code):
        if code[idx].strip() == "#[cfg(test)]" and idx + 1 < len(code) and re.match(r"\s*(pub\s+)?mod\s", code[idx + 1]):
            depth, started, j = 0, False, idx + 1
            while j < len(code):
                depth += code[j].count("{") - code[j].count("}")
                started = started or "{" in code[j]
                if started and depth == 0:
                    break
                j += 1
            count += j - idx + 1
            idx = j + 1
        else:
            idx += 1
    return count


def rust_files(roots):
    for root in roots:
        if os.path.isfile(root):
            yield root
            continue
        for dirpath, _, names in os.walk(root):
            for name in sorted(names):
                if name.endswith(".rs"):
                    yield os.path.join(dirpath, name)


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--fn-min", type=int, default=150)
    ap.add_argument("--file-min", type=int, default=600)
    ap.add_argument("paths", nargs="*", default=["src"])
    args = ap.parse_args()
    files = sorted(rust_files(args.paths))
    fns = [(n, f"{p}:{line}", name) for p in files for (n, name, line) in functions(p)]
    print(f"functions of {args.fn_min} lines or more:")
    for n, where, name in sorted(fns, reverse=True):
        if n >= args.fn_min:
            print(f"  {n:5d}  {name:32s} {where}")
    print(f"files of {args.file_min} lines or more (total / outside test modules):")
    sizes = []
    for p in files:
        total = sum(1 for _ in open(p))
        sizes.append((total, total - test_lines(p), p))
    for total, code, p in sorted(sizes, reverse=True):
        if total >= args.file_min:
            print(f"  {total:5d} / {code:5d}  {p}")


if __name__ == "__main__":
    main()
