#!/usr/bin/env python3
"""Checks that the library's modules import only modules at or below their
own layer, so data flows one way (DESIGN section 4):

    error, io, num          shared helpers
    npy                     .npy files
    network                 the model every stage shares
    lanes, chunk, partial   value lanes, slice numbering, partial files
    formats, generate       inputs (they build networks)
    tree                    contraction trees
    cost                    metrics, memory rule, machines, byte units
    host                    what this machine has (memory, cores)
    search, slicing, plan   tree search, slice sets, plan files
    jobs, exec              scheduler files; the executor and gather
    calibrate               measuring a node with the executor
    report                  text, JSON and charts of everything above
    command                 one function per command
    fuzzing                 fuzz entry points (call everything)

Modules on one line are independent of each other unless listed in order
within the line (formats before generate, search before slicing before
plan). Every `crate::` path in code counts (doc comments do not), and so
do test modules. Prints each violation; exits 1 when there is one.
"""
import pathlib, re, sys

ORDER = [
    ["error"], ["io", "num"], ["npy"], ["network"], ["lanes", "chunk"], ["partial"],
    ["formats"], ["generate"], ["tree"], ["cost"], ["host"], ["search"], ["slicing"],
    ["plan"], ["jobs", "exec"], ["calibrate"], ["report"], ["command"], ["fuzzing"],
]
RANK = {m: i for i, layer in enumerate(ORDER) for m in layer}

root = pathlib.Path(__file__).resolve().parent.parent / "src"
bad = []
for path in sorted(root.rglob("*.rs")):
    rel = path.relative_to(root)
    if rel.parts[0] in ("cli", "bin") or rel.name in ("main.rs", "lib.rs"):
        continue
    module = rel.parts[0].removesuffix(".rs")
    if module not in RANK:
        bad.append(f"{rel}: module '{module}' has no layer in scripts/check-layers.py")
        continue
    for n, line in enumerate(path.read_text().splitlines(), 1):
        code = line.split("//")[0]
        for target in re.findall(r"\bcrate::([a-z_]+)", code):
            if target in ("Error", "Result") or target == module:
                continue
            if target not in RANK:
                continue
            if RANK[target] >= RANK[module]:
                bad.append(f"{rel}:{n}: {module} uses {target}, which comes later (or beside it)")
for b in bad:
    print(b)
if bad:
    sys.exit(1)
print(f"layers: every crate:: path points down ({len(RANK)} modules in {len(ORDER)} layers)")
