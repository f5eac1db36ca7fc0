"""House rules that keep the layers apart."""

from __future__ import annotations

import subprocess
import sys


def _modules_after(statement: str) -> set[str]:
    code = f"import sys; {statement}; print('\\n'.join(sorted(sys.modules)))"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    return set(out.split())


def test_stats_never_imports_the_web_layer():
    loaded = _modules_after("import proportio.stats.twogroup, proportio.stats.intervals, proportio.stats.exact")
    assert not {"flask", "marshmallow", "werkzeug", "proportio.api", "statsmodels"} & loaded


def test_local_cli_path_does_not_load_flask():
    loaded = _modules_after("from proportio import cli; cli.main(['test', '--control', '4/10', '--treatment', "
                            "'6/10', '--json'])")
    assert "flask" not in loaded
