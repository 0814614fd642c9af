"""qc.analysis is pure science: importing every module must not import Django."""

import pkgutil
import subprocess
import sys
from pathlib import Path

import qc.analysis


def test_analysis_modules_import_without_django():
    names = [f"qc.analysis.{m.name}" for m in pkgutil.iter_modules(qc.analysis.__path__)]
    assert len(names) >= 5
    script = ("import importlib, sys\n"
              f"for name in {names!r}: importlib.import_module(name)\n"
              "bad = sorted(m for m in sys.modules if m == 'django' or m.startswith('django.')"
              " or m.startswith('matplotlib'))\n"
              "print(','.join(bad))\n")
    root = Path(__file__).resolve().parents[2]
    result = subprocess.run([sys.executable, "-c", script], check=False, cwd=root,
                            capture_output=True, text=True,
                            env={"PATH": "/usr/bin:/bin", "PYTHONPATH": str(root)})
    assert result.returncode == 0, result.stderr
    assert result.stdout.strip() == ""
