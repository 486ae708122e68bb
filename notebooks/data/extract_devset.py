"""Compact copy of the development set's fibre truth for notebook 06.

Source: independent NEURON-based development set FNPG-N07 (/work/shared/devset), truth/fibres.csv, an
outside simulation with full truth (see its README.md). Run: python3 notebooks/data/extract_devset.py /work/shared/devset
Keeps, per fibre: class, axon diameter (um), blocker sensitivity u and the velocity (m/s) at each temperature,
values unchanged (the source's own 4-5 significant digits). Nothing is edited by hand.
"""
import csv
import sys
from pathlib import Path

src = Path(sys.argv[1]) / "truth" / "fibres.csv"
out = Path(__file__).with_name("devset-fibres.csv")
keep = ["class", "axon_diameter_um", "blocker_u", "v_20C_m_s", "v_25C_m_s", "v_30C_m_s", "v_37C_m_s"]
with open(src, newline="") as f, open(out, "w", newline="") as g:
    r = csv.DictReader(f)
    w = csv.writer(g, lineterminator="\n")
    w.writerow(keep)
    n = 0
    for row in r:
        w.writerow([row[k] for k in keep])
        n += 1
print(f"{n} fibres -> {out}")
