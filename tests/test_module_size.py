"""The house rule on module size (issue 19; STYLE.md item 8): no product module is longer than
400 lines outside migrations, so a module that grows past it is split by topic before it
becomes hard to read.  Tests, benchmarks and fixtures are not product code."""

from __future__ import annotations

import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
MAX_LINES = 400



def _product_packages() -> list[str]:
    """The project's own top-level packages, as the layer contract lists them."""
    config = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    return config["tool"]["importlinter"]["root_packages"]


def _line_count(path: Path) -> int:
    with path.open("rb") as handle:
        return sum(1 for _ in handle)


def test_every_product_package_is_found():
    packages = _product_packages()
    assert {"inventory", "qc", "bench", "sersledger"} <= set(packages)
    assert all((ROOT / name / "__init__.py").is_file() for name in packages)


def test_no_product_module_is_longer_than_400_lines():
    too_long = {}
    for package in _product_packages():
        for path in sorted((ROOT / package).rglob("*.py")):
            relative = path.relative_to(ROOT).as_posix()
            if "migrations" in path.parts:
                continue
            lines = _line_count(path)
            if lines > MAX_LINES:
                too_long[relative] = lines
    assert too_long == {}, (
        f"split these modules by topic (at most {MAX_LINES} lines; migrations excepted): "
        f"{too_long}")


def test_the_count_sees_a_long_module(tmp_path):
    # The counter itself: a file of 401 lines (with and without a final newline) is too long.
    long_module = tmp_path / "long.py"
    long_module.write_text("x = 1\n" * 401, encoding="utf-8")
    assert _line_count(long_module) == 401
    long_module.write_text("x = 1\n" * 400 + "x = 1", encoding="utf-8")
    assert _line_count(long_module) == 401
