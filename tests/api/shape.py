"""shape.py: the shape the library move (issue 14) promises, measured.

- cli/ holds at most 40% of the C lines of cli/ + recon/ + libencode/ (wc -l);
- no function over 200 lines, no source file over 800 lines;
- no two source files use names defined in each other (a cycle of two
  files, each calling a function the other defines);
- no string in the library (libencode/, recon/) names a CLI option (--word).

Prints one line per finding and exits 1 if there is any; `--report` prints
the figures and always exits 0. Run by `make test-api` and from the shell:
    /usr/bin/python3 tests/api/shape.py [--report]
"""
import glob
import re
import sys

DIRS = ("cli", "recon", "libencode")


def c_files():
    return sorted(f for d in DIRS for f in glob.glob(f"{d}/*.[ch]"))


def strip_comments_strings(text):
    text = re.sub(r"/\*.*?\*/", lambda m: "\n" * m.group(0).count("\n"), text, flags=re.S)
    text = re.sub(r"//[^\n]*", "", text)
    return re.sub(r'"(\\.|[^"\\\n])*"', '""', text)


def functions(path, with_static=True):
    """(name, first line, length) of each function definition at file scope
    (without the file-local `static` ones when with_static is false)."""
    text = strip_comments_strings(open(path, errors="ignore").read())
    out, depth, start, name = [], 0, None, None
    lines = text.split("\n")
    for i, line in enumerate(lines):
        if depth == 0 and "{" in line:
            head = " ".join(lines[max(0, i - 4):i + 1])
            head = head.split(";")[-1].split("}")[-1]
            m = re.search(r"(\w+)\s*\([^;{}()]*(\([^;{}()]*\)[^;{}()]*)*\)\s*\{", head)
            static = re.match(r"\s*static\b", head[:m.start()].strip().split("\n")[-1]) if m else None
            if m and m.group(1) not in ("if", "for", "while", "switch", "sizeof") \
                    and (with_static or not static):
                start, name = i, m.group(1)
        depth += line.count("{") - line.count("}")
        if depth == 0 and start is not None and "}" in line:
            out.append((name, start + 1, i - start + 1))
            start = None
    return out


def defined_functions(path):
    """Functions a file defines for other files (not its static ones)."""
    return {n for n, _, _ in functions(path, with_static=False)}


def main():
    report = "--report" in sys.argv
    findings = []
    files = c_files()
    lines = {f: sum(1 for _ in open(f, errors="ignore")) for f in files}
    total = sum(lines.values())
    cli = sum(n for f, n in lines.items() if f.startswith("cli/"))
    share = cli / total if total else 0
    print(f"shape: cli/ {cli} of {total} C lines ({100 * share:.1f}%)")
    if share > 0.40:
        findings.append(f"cli/ holds {100 * share:.1f}% of the C lines (at most 40%)")
    for f, n in lines.items():
        if n > 800:
            findings.append(f"{f}: {n} lines (at most 800)")
    longest = (0, "")
    for f in files:
        if not f.endswith(".c"):
            continue
        for name, first, n in functions(f):
            longest = max(longest, (n, f"{f}:{first} {name}"))
            if n > 200:
                findings.append(f"{f}:{first}: {name} is {n} lines (at most 200)")
    print(f"shape: longest function {longest[0]} lines ({longest[1]})")
    defs = {f: defined_functions(f) for f in files if f.endswith(".c")}
    own = {f: {n for n, _, _ in functions(f)} for f in defs}
    uses = {}
    for f in defs:
        text = strip_comments_strings(open(f, errors="ignore").read())
        # calls, not member calls through a struct's function pointer
        uses[f] = set(re.findall(r"(?<![.>\w])(\w+)\s*\(", text))
    srcs = sorted(defs)
    for i, a in enumerate(srcs):
        for b in srcs[i + 1:]:
            ab = (uses[a] & defs[b]) - own[a]
            ba = (uses[b] & defs[a]) - own[b]
            if ab and ba:
                findings.append(f"{a} and {b} use names defined in each other "
                                f"({sorted(ab)[0]}, {sorted(ba)[0]})")
    for f in files:
        if f.startswith("cli/"):
            continue
        for n, line in enumerate(open(f, errors="ignore"), 1):
            for s in re.findall(r'"(?:\\.|[^"\\])*"', line):
                if re.search(r"(^|[\s(\"'])--[a-z]", s):
                    findings.append(f"{f}:{n}: library string names a CLI option: {s}")
    for x in findings:
        print("shape: " + x)
    print(f"shape: {len(findings)} findings")
    return 0 if report or not findings else 1


if __name__ == "__main__":
    sys.exit(main())
