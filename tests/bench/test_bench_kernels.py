"""Speed of the compiled network kernels (issue 2 item 10). Run with:

    pytest -m bench --benchmark-enable tests/bench/test_bench_kernels.py

Each workload (results/benchmarks/kernel_workloads.py, shared with the script
results/benchmarks/kernel_speed.py) is timed through the numba kernels by pytest-benchmark
and through the plain-Python ReferenceNet in the same test; the ratio of the medians is
reported in ``extra_info`` and printed. Targets: >= 30x for the recurrent 100,000-step
episode; a second process with a warm numba cache finishes its first evaluation in < 1 s.
"""

from __future__ import annotations

import statistics
import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parents[2] / "results" / "benchmarks"))
import kernel_workloads as workloads  # noqa: E402  (shared with kernel_speed.py)

pytestmark = pytest.mark.bench


def kernel_median(benchmark, work: workloads.Workload) -> float:
    """Median seconds of the kernel form, through pytest-benchmark when it is enabled."""
    if benchmark.disabled:
        return workloads.median_seconds(work.kernel, work.kernel_repeats)
    benchmark.pedantic(work.kernel, rounds=work.kernel_repeats, iterations=1, warmup_rounds=1)
    return benchmark.stats.stats.median


@pytest.mark.parametrize("name", list(workloads.WORKLOADS))
def test_bench_kernel_vs_reference(benchmark, name: str) -> None:
    work = workloads.WORKLOADS[name]()
    work.check()  # same results both ways; also loads or compiles the kernels
    kernel_s = kernel_median(benchmark, work)
    reference_s = workloads.median_seconds(work.reference, work.reference_repeats)
    ratio = reference_s / kernel_s
    benchmark.extra_info.update(
        description=work.description, reference_median_s=reference_s, ratio=ratio
    )
    print(
        f"\n{name}: kernel {kernel_s * 1e3:.2f} ms, plain Python {reference_s * 1e3:.1f} ms, "
        f"ratio {ratio:.1f}x"
        + (f" (target >= {work.ratio_target:g}x)" if work.ratio_target else "")
    )
    if work.ratio_target is not None:
        assert ratio >= work.ratio_target


def test_bench_warm_cache_second_process(benchmark) -> None:
    """Process start to first XOR evaluation done, numba cache warmed by an earlier process."""
    workloads.first_evaluation()  # warms the cache
    samples: list[workloads.FirstEvaluation] = []
    if benchmark.disabled:
        samples += [workloads.first_evaluation() for _ in range(3)]
    else:
        benchmark.pedantic(lambda: samples.append(workloads.first_evaluation()), rounds=3)
    median = statistics.median(x.wall_s for x in samples)
    benchmark.extra_info.update(
        first_evaluation_wall_s=[x.wall_s for x in samples],
        first_evaluation_cpu_s=[x.cpu_s for x in samples],
    )
    walls = ", ".join(f"{x.wall_s:.3f}" for x in samples)
    cpus = ", ".join(f"{x.cpu_s:.3f}" for x in samples)
    print(
        f"\nsecond process, start to first evaluation: median {median:.3f} s ({walls}; CPU {cpus})"
    )
    assert median < workloads.WARM_START_TARGET_S
