"""Write an executed notebook back into the repository in a small form.

usage: store.py <executed.ipynb> <target.ipynb> <png prefix>

- cell ids and sources come from the target (the notebook as written); outputs from the executed copy
  (run top to bottom in one kernel by tests/notebooks/run.sh), matched by cell id;
- execution counts: tslab leaves them empty, so the code cells are numbered 1, 2, ... in the order they ran;
- figure outputs (HTML with a fascicle figure and its embedded plotly.js, about 1.4 MB each) are replaced by
  the PNG picture check.mjs took of that figure in Chromium (<png prefix>.fig<k>.png, in page order) plus a
  text line; the live figure comes back when the cell is run. Every other output is kept as it is.
"""
import base64
import json
import sys
from pathlib import Path

executed, target, prefix = sys.argv[1], sys.argv[2], sys.argv[3]
ran = json.load(open(executed))
nb = json.load(open(target))
by_id = {c.get("id"): c for c in ran["cells"]}
k = 0  # figure index in page order
count = 0
for cell in nb["cells"]:
    if cell["cell_type"] != "code":
        continue
    src = by_id.get(cell["id"])
    if src is None:
        sys.exit(f"{target}: cell {cell['id']} is missing from {executed}")
    count += 1
    cell["execution_count"] = count
    outputs = []
    for o in src.get("outputs", []):
        html = o.get("data", {}).get("text/html")
        text = "".join(html) if isinstance(html, list) else (html or "")
        n = text.count('class="fascicle-figure"')
        if n == 0:
            if "execution_count" in o:
                o["execution_count"] = count
            outputs.append(o)
            continue
        for _ in range(n):
            png = Path(f"{prefix}.fig{k}.png")
            if not png.exists():
                sys.exit(f"{target}: no picture {png} for figure {k} (run check.mjs first)")
            name = text.split('data-name="', 1)[1].split('"', 1)[0] if 'data-name="' in text else "figure"
            outputs.append(
                {
                    "output_type": "display_data",
                    "metadata": {},
                    "data": {
                        "image/png": base64.b64encode(png.read_bytes()).decode("ascii"),
                        "text/plain": [f"Figure {name} (stored as a picture; run the cell for the interactive figure)"],
                    },
                }
            )
            k += 1
    cell["outputs"] = outputs
nb.setdefault("metadata", {})["fascicle"] = {"stored": "executed by tests/notebooks/run.sh --store"}
with open(target, "w") as f:
    json.dump(nb, f, indent=1, ensure_ascii=False)
    f.write("\n")
size = Path(target).stat().st_size
print(f"stored {target}: {count} code cells, {k} figures as pictures, {size / 1024:.0f} kB")
