"""Writes eos80_reference.csv: EOS-80 density and UNESCO 1983 freezing point from Python `seawater`.

Reference library: `seawater` 3.3.5 from PyPI (EOS-80 / UNESCO 1983 routines; inputs ITS-90 °C and dbar).
Run:  python -m pip install seawater==3.3.5 && python tests/data/make_eos80_reference.py
"""
import csv
import itertools
import pathlib
import warnings

warnings.simplefilter("ignore")
import seawater as sw  # noqa: E402

rows = []
for s, t, p in itertools.product(
    [0.0, 0.5, 2.0, 5.0, 10.0, 18.0, 25.0, 30.0, 35.0, 38.0, 42.0],
    [-2.0, 0.0, 4.0, 10.0, 15.0, 20.0, 25.0, 30.0, 40.0],
    [0.0, 1.0, 10.0, 100.0, 1000.0, 5000.0, 10000.0],
):
    rows.append((s, t, p, repr(float(sw.dens(s, t, p))), repr(float(sw.fp(s, p)))))

out = pathlib.Path(__file__).with_name("eos80_reference.csv")
with out.open("w", newline="") as f:
    w = csv.writer(f)
    w.writerow(["practical_salinity", "temperature_c_its90", "pressure_dbar", "density_kg_m3", "freezing_point_c_its90"])
    w.writerows(rows)
print(f"{len(rows)} rows -> {out}")
