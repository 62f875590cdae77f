"""Cost of compiling a frame plan (``compile_plan``) for every example spec, beside the
cost of encoding one frame of it, measured in the same run.

    python bench/plan_compile.py
"""

from __future__ import annotations

import time

import numpy as np

from ookframe import compile_plan, encode, random_values
from ookframe.demo import example_names, example_text
from ookframe.spec_io import spec_from_dict


def best_us(fn, n: int = 200, repeat: int = 5) -> float:
    fn()
    best = float("inf")
    for _ in range(repeat):
        t0 = time.process_time()
        for _ in range(n):
            fn()
        best = min(best, (time.process_time() - t0) / n)
    return best * 1e6


def main() -> None:
    import tomllib

    for name in example_names():
        spec = spec_from_dict(tomllib.loads(example_text(name)))
        plan = compile_plan(spec)
        values = random_values(plan, np.random.default_rng(0))
        t_plan = best_us(lambda: compile_plan(spec))  # noqa: B023
        t_enc = best_us(lambda: encode(plan, values))  # noqa: B023
        print(f"{name:24s} compile_plan {t_plan:7.1f} µs   encode one frame {t_enc:7.1f} µs "
              f"(ratio {t_plan / t_enc:.2f})")


if __name__ == "__main__":
    main()
