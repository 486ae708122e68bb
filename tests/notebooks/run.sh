#!/usr/bin/env bash
# Execute every notebook in real Jupyter with the tslab kernel, export each to HTML,
# and check the HTML in headless Chromium (figures rendered, no console errors).
# Needs: jupyter-notebook, jupyter-nbconvert, python3-nbclient, chromium (Debian), a built package.
set -euo pipefail
cd "$(dirname "$0")/../.."
export PYDEVD_DISABLE_FILE_VALIDATION=1
OUT=out/notebooks
rm -rf "$OUT" && mkdir -p "$OUT" out/notebook-figures .ci-artifacts
KDIR=$(mktemp -d)
mkdir -p "$KDIR/kernels/tslab"
cat > "$KDIR/kernels/tslab/kernel.json" <<'JSON'
{"argv":["npx","--no","tslab","kernel","--config-path","{connection_file}"],"display_name":"TypeScript","language":"typescript"}
JSON
export JUPYTER_PATH="$KDIR"
JUPYTER=${JUPYTER:-/usr/bin/jupyter}
status=0
for nb in notebooks/*.ipynb; do
  name=$(basename "$nb" .ipynb)
  echo "-- executing $name"
  if ! "$JUPYTER" nbconvert --to notebook --execute "$nb" --output-dir "$OUT" --output "$name" \
      --ExecutePreprocessor.kernel_name=tslab --ExecutePreprocessor.timeout=900 2> "$OUT/$name.log"; then
    echo "notebook $name failed:"; tail -40 "$OUT/$name.log"
    /usr/bin/python3 - "$OUT/$name.ipynb" <<'PY' || true
import json, sys
try:
    nb = json.load(open(sys.argv[1]))
    for c in nb["cells"]:
        for o in c.get("outputs", []):
            if o.get("output_type") == "error": print(o.get("ename"), o.get("evalue"))
except Exception as e: print(e)
PY
    status=1; continue
  fi
  "$JUPYTER" nbconvert --to html "$OUT/$name.ipynb" --output-dir "$OUT" 2>> "$OUT/$name.log"
done
[ $status -eq 0 ] || exit $status
node tests/notebooks/check.mjs "$OUT"/*.html
