"""stress.allocator: stress workers keep freed memory for reuse (glibc's mallopt)."""

from __future__ import annotations

import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from ookframe.channel import get_preset
from ookframe.stress import run_stress, worker_pool
from tests.conftest import example_spec

_FAULTS = textwrap.dedent("""
    import resource, sys
    from ookframe.channel import get_preset
    from ookframe.stress import run_stress
    from ookframe.stress.allocator import keep_freed_memory
    from tests.conftest import example_spec
    took = keep_freed_memory() if sys.argv[1] == "keep" else None
    spec, ch = example_spec("hive_scale.toml")[0], get_preset("budget-superregen")
    run_stress(spec, ch, 800, seed=1, workers=1)
    f0 = resource.getrusage(resource.RUSAGE_SELF).ru_minflt
    run_stress(spec, ch, 800, seed=1, workers=1)
    print(took, resource.getrusage(resource.RUSAGE_SELF).ru_minflt - f0)
""")


def _faults(mode: str) -> tuple[str, int]:
    root = Path(__file__).resolve().parents[1]
    out = subprocess.run([sys.executable, "-c", _FAULTS, mode], capture_output=True,
                         text=True, check=True, cwd=root).stdout.split()
    return out[0], int(out[1])


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="glibc's mallopt")
def test_kept_blocks_are_not_page_faulted_back_in():
    """mallopt(3) (Linux man-pages, glibc): blocks above M_MMAP_THRESHOLD are mmapped and
    returned with munmap when freed, and free memory at the heap's top above
    M_TRIM_THRESHOLD is given back, so a second stress run of the same size page-faults
    its temporaries in again (thousands of minor faults); with the threshold at its 64-bit
    maximum (32 MiB) and trimming off, the freed blocks are reused and the second run
    faults almost nothing in. (800 transmissions a run: with 400 the faster decoder's
    fewer temporaries left the plain run at 1,957-6,416 faults, too near the bound; with
    800, 4,930-11,241 plain against 0-4 kept, measured 2026-12-03.)"""
    took, kept = _faults("keep")
    if took != "True":
        pytest.skip("this C library has no mallopt")
    _, plain = _faults("plain")
    assert plain > 2000
    assert kept < plain / 20


def test_pool_of_stress_workers_gives_the_same_counts():
    """worker_pool: the same counts as one process (chunk randomness is seeded per chunk,
    whatever runs the chunks; the allocator setting changes speed only)."""
    spec, ch = example_spec("gate_sensor.toml")[0], get_preset("budget-superregen")
    one = run_stress(spec, ch, 300, seed=4, workers=1)
    with worker_pool(2) as pool:
        assert run_stress(spec, ch, 300, seed=4, executor=pool) == one


def test_worker_pool_rejects_zero_workers():
    with pytest.raises(ValueError, match="workers"):
        worker_pool(0)
