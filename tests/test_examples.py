"""The example scripts run (in their quick mode, which checks the code path, not the figures)."""

import pathlib
import subprocess
import sys

import pytest

EXAMPLES = pathlib.Path(__file__).parent.parent / "examples"


@pytest.mark.parametrize("script", ["olr_vs_surface_temperature.py", "tropical_vs_subarctic_winter.py",
                                    "doubled_co2_brightness_temperature.py"])
def test_example_runs(script, tmp_path):
    proc = subprocess.run([sys.executable, str(EXAMPLES / script), "--quick", "--output", str(tmp_path)],
                          capture_output=True, text=True, timeout=600)
    assert proc.returncode == 0, proc.stderr
    assert "wrote" in proc.stdout
    pngs = list(tmp_path.glob("*.png"))
    assert len(pngs) == 1 and pngs[0].stat().st_size > 10_000
