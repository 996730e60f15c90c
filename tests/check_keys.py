"""The key table (src/input/keys.c) against the README and against the program.

1. README.md's key reference is `lopside keys --markdown` verbatim, so the table is the
   one source of the format's reference.
2. Defaults: for every key with a numeric default, on every example that has the key's
   section but not the key, writing `key = default` changes nothing in the JSON (apart
   from provenance and timing): the default the table states is the one used.
3. Bounds: for every key with a bound ("> x", ">= x", "x to y") that an example sets,
   a value just outside the bound is refused with exit 2 and a message naming the key
   at its line: the bound the table states is enforced.
Usage: LOPSIDE=build/lopside python3 tests/check_keys.py [--write]; prints `N passed, M
failed`. --write first rewrites the README's key reference from the table."""
import json
import os
import re
import subprocess
import sys
import tempfile

HERE = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
LOPSIDE = os.environ.get("LOPSIDE", os.path.join(HERE, "build", "lopside"))
VOLATILE = ("generated", "timing", "input")


def table():
    """Rows of the Markdown reference: (section kind, key, type, bounds, default)."""
    out = subprocess.run([LOPSIDE, "keys", "--markdown"], capture_output=True, text=True,
                         check=True).stdout
    rows = []
    for line in out.splitlines()[2:]:
        cells = [c.strip() for c in line.strip("|").split("|")]
        kind = cells[0].strip("`[]").split(".")[0]
        rows.append((kind, cells[1].strip("`"), cells[2], cells[3], cells[4]))
    return out, rows


def sections_of(text):
    """{section name: (first line index, last line index)} of an INI text."""
    lines, found, current = text.split("\n"), {}, None
    for i, line in enumerate(lines):
        m = re.match(r"\s*\[([^\]]+)\]", line)
        if m:
            current = m.group(1)
            found[current] = [i, i]
        elif current:
            found[current][1] = i
    return lines, found


def key_line(lines, span, key):
    for i in range(span[0] + 1, span[1] + 1):
        if re.match(rf"\s*{re.escape(key)}\s*=", lines[i]):
            return i
    return None


def solve(text, folder, name):
    path = os.path.join(folder, name + ".ini")
    with open(path, "w") as f:
        f.write(text)
    out = os.path.join(folder, name + ".json")
    proc = subprocess.run([LOPSIDE, "run", path, "--json", out], capture_output=True, text=True)
    if proc.returncode != 0:
        return proc, None
    with open(out) as f:
        d = json.load(f)
    for k in VOLATILE:
        d.pop(k, None)
    return proc, without_clock(d)


def without_clock(x):
    """x without the numbers that measure time (seconds, rates per second)."""
    if isinstance(x, dict):
        return {k: without_clock(v) for k, v in x.items()
                if "seconds" not in k and not k.endswith("_per_second")}
    if isinstance(x, list):
        return [without_clock(v) for v in x]
    return x


def outside(bounds, kind_type):
    """A value just outside the bound, or None when the bound is not a plain number."""
    whole = kind_type == "whole number"
    m = re.fullmatch(r"(>=|>) (-?[0-9.e+-]+)", bounds)
    if m:
        x = float(m.group(2))
        return x if m.group(1) == ">" else (x - 1 if whole else x - 0.5)
    m = re.fullmatch(r"(-?[0-9.e+-]+) to (-?[0-9.e+-]+)", bounds)
    if m:
        return float(m.group(2)) + 1 if whole else float(m.group(2)) * 10
    return None


def main():
    passed = failed = 0

    def record(ok, what):
        nonlocal passed, failed
        if ok:
            passed += 1
        else:
            failed += 1
            print(f"FAIL {what}")

    md, rows = table()
    readme_path = os.path.join(HERE, "README.md")
    readme = open(readme_path, encoding="utf-8").read()
    section = re.compile(r"(<!-- keys: begin[^\n]*-->\n)(.*?)(<!-- keys: end -->)", re.S)
    if "--write" in sys.argv[1:]:
        readme = section.sub(lambda g: g.group(1) + md + g.group(3), readme)
        with open(readme_path, "w", encoding="utf-8") as f:
            f.write(readme)
    m = section.search(readme)
    record(m is not None and m.group(2) == md,
           "README's key reference differs from `lopside keys --markdown` (run "
           "tests/check_keys.py --write)")
    examples = sorted(f for f in os.listdir(os.path.join(HERE, "examples")) if f.endswith(".ini"))
    texts = {e: open(os.path.join(HERE, "examples", e)).read() for e in examples}
    checked_defaults = checked_bounds = 0
    with tempfile.TemporaryDirectory(prefix="lopside-keys-") as folder:
        base = {}
        for e, text in texts.items():
            base[e] = solve(text, folder, "base")[1]
        for kind, key, ktype, bounds, default in rows:
            if key in ("ACTION", "PATH") or "*" in key:
                continue
            try:
                value = float(default)
            except ValueError:
                value = None
            for e, text in texts.items():
                lines, secs = sections_of(text)
                for sec, span in secs.items():
                    if sec.split(".")[0] != kind:
                        continue
                    at = key_line(lines, span, key)
                    if value is not None and at is None and base[e] is not None:
                        changed = lines[:span[0] + 1] + [f"{key} = {default}"] + lines[span[0] + 1:]
                        proc, d = solve("\n".join(changed), folder, "default")
                        if proc.returncode == 2 and re.search(
                                r"does not belong|applies to|belongs to|missing|not both", proc.stderr):
                            continue  # no meaning here (another noise or curve, step given)
                        record(d == base[e], f"{e} [{sec}] {key} = {default} (the table's "
                               f"default) changes the result: {proc.stderr.strip()}")
                        checked_defaults += 1
                    bad = outside(bounds, ktype)
                    if bad is not None and at is not None:
                        changed = list(lines)
                        shown = f"{bad:.0f}" if ktype == "whole number" else repr(bad)
                        changed[at] = f"{key} = {shown}"
                        proc, _ = solve("\n".join(changed), folder, "bound")
                        want = f":{at + 1}: [{sec}] {key}:"
                        record(proc.returncode == 2 and want in proc.stderr,
                               f"{e} [{sec}] {key} = {shown} is outside `{bounds}` but gave exit "
                               f"{proc.returncode}: {proc.stderr.strip()!r} (wanted {want!r})")
                        checked_bounds += 1
    record(checked_defaults >= 10, f"only {checked_defaults} defaults could be checked")
    record(checked_bounds >= 5, f"only {checked_bounds} bounds could be checked")
    print(f"# defaults checked: {checked_defaults}; bounds checked: {checked_bounds}")
    print(f"{passed} passed, {failed} failed")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
