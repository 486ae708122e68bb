"""Check the notebooks stored in the repository: nbformat 4.5 with a unique id on every cell, and executed:
every code cell has an execution count (1, 2, ... in order) and no error output; the file stays small.
usage: stored.py notebooks/*.ipynb   (exit 1 on the first problem, naming the notebook and cell)
"""
import json
import sys
from pathlib import Path

LIMIT_KB = 1500
bad = 0
for path in sys.argv[1:]:
    nb = json.load(open(path))
    problems = []
    if (nb.get("nbformat"), nb.get("nbformat_minor", 0)) < (4, 5):
        problems.append(f"nbformat {nb.get('nbformat')}.{nb.get('nbformat_minor')}, expected 4.5 (cell ids)")
    ids = [c.get("id") for c in nb["cells"]]
    for i, c in enumerate(nb["cells"]):
        if not c.get("id"):
            problems.append(f"cell {i} has no id")
    dup = {x for x in ids if x and ids.count(x) > 1}
    if dup:
        problems.append(f"duplicate cell ids {sorted(dup)}")
    n = 0
    for i, c in enumerate(nb["cells"]):
        if c["cell_type"] != "code":
            continue
        n += 1
        if c.get("execution_count") != n:
            problems.append(f"cell {c.get('id', i)}: execution_count {c.get('execution_count')}, expected {n}")
        if any(o.get("output_type") == "error" for o in c.get("outputs", [])):
            problems.append(f"cell {c.get('id', i)}: stored with an error output")
    kb = Path(path).stat().st_size / 1024
    if kb > LIMIT_KB:
        problems.append(f"{kb:.0f} kB, more than {LIMIT_KB} kB")
    for p in problems:
        print(f"stored notebook {path}: {p}")
    bad += bool(problems)
print(f"stored notebooks: {len(sys.argv) - 1 - bad} executed with cell ids, {bad} not")
sys.exit(1 if bad else 0)
