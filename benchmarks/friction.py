"""Time the friction-factor functions per call and print the figures (run: python3 benchmarks/friction.py)."""

from __future__ import annotations

import sys
import timeit
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from calc import friction as fr  # noqa: E402

CASES = [
    ("colebrook(1e5, 1e-4)", 200_000),
    ("friction_factor(1e5, 1e-4)", 200_000),
    ("friction_factor(3e3, 1e-4)  # transitional blend", 200_000),
    ("friction_factor(1e3, 1e-4)  # laminar", 200_000),
    ("swamee_jain_1976(1e5, 1e-4)", 200_000),
    ("haaland_1983(1e5, 1e-4)", 200_000),
    ("churchill_1977(1e5, 1e-4)", 200_000),
    ("serghides_1984(1e5, 1e-4)", 200_000),
    ("friction_detail(1e5, 1e-4)", 50_000),
    ("colebrook_array(RE64, 1e-4)", 20_000),
    ("friction_factor_array(RE64, 1e-4)", 20_000),
]


def main() -> None:
    env = dict(vars(fr), RE64=np.logspace(3, 7, 64))
    print(f"python {sys.version.split()[0]}, numpy {np.__version__}; best of 5 runs")
    for stmt, number in CASES:
        best = min(timeit.repeat(stmt, globals=env, number=number, repeat=5)) / number
        print(f"{best * 1e6:9.3f} us  {stmt}")


if __name__ == "__main__":
    main()
