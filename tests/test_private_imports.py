"""No app imports another top-level app's private (underscore) modules or names.

import-linter checks the layers and the pure packages (``[tool.importlinter]`` in
pyproject.toml) but has no contract for a private *name* imported from a public module
(``from inventory.services._common import _link``), so this test walks the syntax tree of
every module of the project's packages instead.
"""

import ast
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
APPS = ("sersledger", "bench", "insight", "exchange", "qc", "inventory")


def _private(dotted: str) -> bool:
    return any(part.startswith("_") for part in dotted.split("."))


def _offences(app: str, path: Path, root: Path = ROOT) -> list[str]:
    offences = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"), str(path))):
        if isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
            other = node.module.split(".")[0]
            names = [alias.name for alias in node.names]
            if other in APPS and other != app and (
                _private(node.module) or any(name.startswith("_") for name in names)
            ):
                offences.append(f"{path.relative_to(root)}:{node.lineno} from {node.module} "
                                f"import {', '.join(names)}")
        elif isinstance(node, ast.Import):
            for alias in node.names:
                other = alias.name.split(".")[0]
                if other in APPS and other != app and _private(alias.name):
                    offences.append(f"{path.relative_to(root)}:{node.lineno} import {alias.name}")
    return offences


def test_no_app_imports_another_apps_private_names():
    checked = 0
    offences = []
    for app in APPS:
        for path in sorted((ROOT / app).rglob("*.py")):
            checked += 1
            offences += _offences(app, path)
    assert checked > 100, "the walk found too few modules; did the layout move?"
    assert offences == []


def test_the_walk_catches_a_private_import(tmp_path):
    module = tmp_path / "probe.py"
    module.write_text("from inventory.services._common import _link\n"
                      "import inventory._secret\n"
                      "from inventory.services import _save_new\n"
                      "from .local import _fine\n", encoding="utf-8")
    assert len(_offences("qc", module, tmp_path)) == 3
    assert _offences("inventory", module, tmp_path) == []
