"""The layers of src/ and include/lopside/, checked from the #include lines.

The folders are layers, lowest first: util, input, model, engine, studies, report, app.
A file may include headers of its own layer and of the layers below it, never above;
and the modules (a .c file with its public header, or a private header with the files
of its folder that share it) include each other without cycles, so the flow runs one
way: input -> model -> engine -> studies -> report -> app.
Prints one line per violation and `N passed, M failed`."""
import glob
import os
import re
import sys

LAYERS = ["util", "input", "model", "engine", "studies", "report", "app"]
HERE = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
PUBLIC = re.compile(r'#include "lopside/([a-z]+)/([a-z_]+)\.h"')
PRIVATE = re.compile(r'#include "([a-z_]+)\.h"')


def module_of(path):
    """A private header (x_private.h, x_build.h) belongs to the builder it serves."""
    name = os.path.splitext(os.path.basename(path))[0]
    return re.sub(r"_(private|build)$", "", name)


def main():
    os.chdir(HERE)
    passed, failed = 0, 0
    edges = {}
    files = sorted(glob.glob("src/*/*.[ch]") + glob.glob("include/lopside/*/*.h"))
    for path in files:
        layer = path.split("/")[-2]
        if layer not in LAYERS:
            print(f"FAIL {path}: folder {layer!r} is not a layer ({', '.join(LAYERS)})")
            failed += 1
            continue
        mine = module_of(path)
        for line_no, line in enumerate(open(path, encoding="utf-8"), 1):
            m = PUBLIC.match(line)
            if m:
                target_layer, target = m.group(1), m.group(2)
                ok = target_layer in LAYERS and LAYERS.index(target_layer) <= LAYERS.index(layer)
                if not ok:
                    print(f"FAIL {path}:{line_no}: {layer} includes {target_layer}/{target}.h, "
                          "a layer above it")
                    failed += 1
                else:
                    passed += 1
                if not os.path.exists(f"include/lopside/{target_layer}/{target}.h"):
                    print(f"FAIL {path}:{line_no}: no header include/lopside/{target_layer}/{target}.h")
                    failed += 1
                if target != mine:
                    edges.setdefault(mine, set()).add(target)
                continue
            m = PRIVATE.match(line)
            if m and path.startswith("src/"):
                target = module_of(m.group(1))
                if target != mine:
                    edges.setdefault(mine, set()).add(target)
    # Cycles between modules, by depth-first search.
    state, stack = {}, []

    def visit(node):
        nonlocal failed
        state[node] = 1
        stack.append(node)
        for nxt in sorted(edges.get(node, ())):
            if state.get(nxt) == 1:
                print("FAIL include cycle: " + " -> ".join(stack[stack.index(nxt):] + [nxt]))
                failed += 1
            elif nxt not in state:
                visit(nxt)
        stack.pop()
        state[node] = 2

    for node in sorted(edges):
        if node not in state:
            visit(node)
    passed += 1 if failed == 0 else 0
    print(f"{passed} passed, {failed} failed")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
