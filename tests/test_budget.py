"""Memory estimates of the costly settings (fabric2seis/budget.py) against measured peaks.

The estimates add up the largest arrays the code holds at once; each is compared with the peak
resident memory a fresh process gains while doing that work (Linux: the peak ``VmHWM`` of
/proc/self/status, reset to the resident size by writing 5 to /proc/self/clear_refs just before;
proc(5) manual page), and must lie within a factor of 2 of it, so that a refusal for memory is
not made up.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys

import pytest

from fabric2seis import budget
from fabric2seis.errors import InputError
from fabric2seis.settings import PACKAGED_DEFAULTS, read_yaml

PEAK = """
import json
def status(key):
    for line in open("/proc/self/status"):
        if line.startswith(key):
            return int(line.split()[1]) * 1024
def measure(work):
    with open("/proc/self/clear_refs", "w") as f:     # resets the peak (VmHWM) to the resident size
        f.write("5")
    base = status("VmRSS")
    work()
    return status("VmHWM") - base
"""

KERNEL = PEAK + """
from fabric2seis.fabric.kernel import self_convolution_table
from fabric2seis.budget import kernel_bytes
import numpy as np
np.polynomial.legendre.leggauss(10)
print(json.dumps([kernel_bytes({h}), measure(lambda: self_convolution_table({h}))]))
"""

BOOTSTRAP = PEAK + """
import os, tempfile
from pathlib import Path
os.environ["XDG_CACHE_HOME"] = tempfile.mkdtemp()
from fabric2seis import budget, pipeline
from fabric2seis.cli import main
from fabric2seis.settings import settings_for
tmp = Path(tempfile.mkdtemp())
main(["synth", str(tmp / "g.csv"), "--n", "{n}", "--fabric", "olivine-A", "--weights", "--seed", "3"])
(tmp / "g.yaml").write_text("bootstrap: {{n: {b}}}\\n")
settings, source = settings_for(tmp / "g.csv")
sample = pipeline.ingest(tmp / "g.csv", settings, source)
pipeline.fabric_stage(sample)
seismic = pipeline.seismic_stage(sample)
print(json.dumps([budget.bootstrap_bytes({b}, [{n}]), measure(lambda: pipeline.uncertainty_stage(sample, seismic))]))
"""

STACK = PEAK + """
from pathlib import Path
import tempfile
from fabric2seis import budget
from fabric2seis.waves.stack import read_stack, sweep_stack
f = Path(tempfile.mkdtemp()) / "stack.yaml"
f.write_text("period_s: {period}\\nback_azimuth_step_deg: {step}\\nlayers:\\n"
             "  - {{fast_azimuth_deg: 40, delay_s: 0.8}}\\n  - {{fast_azimuth_deg: 120, delay_s: 0.4}}\\n")
stack = read_stack(f)
sweep_stack(stack)
print(json.dumps([budget.stack_bytes({step}, {period}), measure(lambda: sweep_stack(stack))]))
"""


def estimate_and_peak(script: str) -> tuple[float, float]:
    if not os.access("/proc/self/clear_refs", os.W_OK):
        pytest.skip("needs Linux's /proc/self/clear_refs to measure a peak")
    run = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, timeout=300)
    assert run.returncode == 0, run.stderr
    estimate, peak = json.loads(run.stdout.strip().splitlines()[-1])
    return estimate, peak


@pytest.mark.parametrize("script", [KERNEL.format(h=5.0),                      # about 45 MiB
                                    BOOTSTRAP.format(n=100, b=2000),           # about 340 MiB
                                    STACK.format(step=1.0, period=12.0)],      # about 280 MiB
                         ids=["kernel halfwidth 5 deg", "bootstrap 2000 x 100 grains", "stack every 1 deg"])
def test_estimate_is_within_a_factor_of_two_of_the_measured_peak(script):
    estimate, peak = estimate_and_peak(script)
    assert peak > 20 * 2 ** 20, "too small to measure against the process's noise"
    assert 0.5 < estimate / peak < 2.0, f"estimate {estimate / 2**20:.0f} MiB, measured {peak / 2**20:.0f} MiB"


def test_default_settings_pass_and_refusals_name_key_estimate_and_limit(monkeypatch):
    settings = read_yaml(PACKAGED_DEFAULTS)
    budget.check_settings(settings, "defaults.yaml")
    budget.check_bootstrap(settings, [30_000, 5_000], "defaults.yaml")       # a large map: 200 resamples
    monkeypatch.setattr(budget, "memory_limit_bytes", lambda: 2 ** 30)
    with pytest.raises(InputError) as refused:
        budget.check_bootstrap({"bootstrap": {"n": 20_000}}, [500], "s.yaml")
    text = refused.value.one_line()
    assert text.startswith("s.yaml, key bootstrap.n:") and "GiB" in text and "1.0 GiB a run may use" in text


def test_the_limit_is_half_the_machines_memory_or_of_a_fallback(monkeypatch):
    pages, size = budget.os.sysconf("SC_PHYS_PAGES"), budget.os.sysconf("SC_PAGE_SIZE")
    assert budget.memory_limit_bytes() == pytest.approx(0.5 * pages * size)

    def unknown(name):
        raise ValueError(name)
    monkeypatch.setattr(budget.os, "sysconf", unknown)
    assert budget.memory_limit_bytes() == 0.5 * budget.FALLBACK_MEMORY_BYTES


def test_direction_count_of_the_grid():
    from fabric2seis.waves import hemisphere_grid

    for step in (0.5, 1.0, 3.0):
        assert budget.directions(step) == pytest.approx(len(hemisphere_grid(step)[0]), rel=0.05)
