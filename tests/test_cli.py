"""The command-line shell: exit status, one-line errors, no traceback (CONTRACT.md)."""

import subprocess
import sys


def run(*args):
    return subprocess.run([sys.executable, "-m", "fabric2seis", *args], capture_output=True, text=True)


def test_minerals_lists_every_entry_with_density_and_source():
    out = run("minerals")
    assert out.returncode == 0, out.stderr
    for name in ("olivine", "quartz", "ice", "muscovite"):
        assert name in out.stdout
    assert "kg/m3" in out.stdout and "Abramson" in out.stdout


def test_minerals_shows_one_entry_in_full():
    out = run("minerals", "Fo90")
    assert out.returncode == 0, out.stderr
    assert "olivine" in out.stdout and "320.50" in out.stdout and "dCij/dP" in out.stdout


def test_unknown_mineral_is_one_line_exit_2_no_traceback():
    out = run("minerals", "olivne")
    assert out.returncode == 2
    assert out.stderr.count("\n") == 1 and "Traceback" not in out.stderr
    assert "did you mean 'olivine'" in out.stderr


def test_usage_error_exits_2():
    out = run("no-such-command")
    assert out.returncode == 2 and "Traceback" not in out.stderr


def test_the_readmes_python_example_runs():
    # The README shows the library used from Python; it must run as printed, and a random aggregate
    # of olivine is nearly isotropic (common practice: a few percent of anisotropy from 5,000 grains).
    import re
    from pathlib import Path

    readme = (Path(__file__).resolve().parents[1] / "README.md").read_text()
    code = re.search(r"## Using the library from Python\n\n```python\n(.*?)```", readme, re.S).group(1)
    scope: dict = {}
    exec(code.replace("print(", "found = ("), scope)
    vp_max, avs_max = scope["found"]
    assert 8.0 < vp_max < 8.6 and 0.0 < avs_max < 5.0
