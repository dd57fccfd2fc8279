"""core never imports a UI package (STYLE: one direction of dependence)."""

import subprocess
import sys


def test_core_imports_no_ui_package():
    code = ("import sys, core; bad = [m for m in ('panel', 'bokeh', 'param', 'app') if m in sys.modules];"
            "print(','.join(bad))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""
