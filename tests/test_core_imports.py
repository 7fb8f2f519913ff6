"""The computing core must import without any UI package (STYLE: computing apart from display)."""

import subprocess
import sys

CORE_MODULES = [
    "cageprint",
    "cageprint.errors",
    "cageprint.spectra",
    "cageprint.cli",
]

BLOCKER = """
import sys
class _Block:
    def find_spec(self, name, path=None, target=None):
        if name.split('.')[0] in ('plotly', 'ipywidgets', 'anywidget', 'IPython'):
            raise ImportError('UI package blocked in core test: ' + name)
        return None
sys.meta_path.insert(0, _Block())
import importlib, pkgutil
import cageprint
skip = ('cageprint.widgets', 'cageprint.figures')
for m in pkgutil.walk_packages(cageprint.__path__, 'cageprint.'):
    if m.name.startswith(skip):
        continue
    importlib.import_module(m.name)
print('ok')
"""


def test_core_imports_without_ui_packages():
    # common practice, no source: the library must run headless (batch, CLI) with no UI stack
    out = subprocess.run([sys.executable, "-c", BLOCKER], capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == "ok"


def test_errors_are_value_errors():
    from cageprint import errors

    for name in errors.__all__:
        assert issubclass(getattr(errors, name), ValueError)


def test_spectrum_format_error_names_file_and_line():
    from cageprint.errors import SpectrumFormatError

    e = SpectrumFormatError("non-numeric cell 'abc'", source="run1.csv", line=12)
    assert str(e) == "run1.csv, line 12: non-numeric cell 'abc'"
