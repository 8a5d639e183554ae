"""Write greenhouse-beds.csv: an invented data set for the demo model (seeded, reproducible).

The scenario is made up: a prototype greenhouse logs four sensor readings per plant bed
(soil moisture, air humidity, leaf temperature, light), each rescaled to [0, pi] as an
angle, and a grower marks the bed "dry" or "wet". The label follows a smooth nonlinear
rule of the readings plus a little noise, so a classifier has something to find.

Run from the repository root: ``.venv/bin/python examples/make_greenhouse_data.py``.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

ROWS = 120
SEED = 20261205
NAMES = ("soil_moisture", "air_humidity", "leaf_temperature", "light")


def main() -> None:
    rng = np.random.default_rng(SEED)
    x = rng.uniform(0.0, np.pi, size=(ROWS, len(NAMES)))
    score = np.sin(x[:, 0]) * np.cos(x[:, 1] / 2) - 0.4 * np.cos(x[:, 2] - x[:, 3])
    noisy = score + rng.normal(0.0, 0.15, size=ROWS)
    labels = np.where(noisy > np.median(noisy), "wet", "dry")
    out = Path(__file__).with_name("greenhouse-beds.csv")
    with out.open("w", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow([*NAMES, "label"])
        for row, label in zip(x, labels, strict=True):
            writer.writerow([f"{v:.6f}" for v in row] + [label])
    print(f"wrote {out} ({ROWS} rows)")


if __name__ == "__main__":
    main()
