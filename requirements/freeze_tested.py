"""Write requirements/constraints.txt: the installed versions of everything the project needs.

Walks the requirements of ``[project] dependencies`` and the ``test``, ``server`` and ``lab``
extras in pyproject.toml through the installed distributions (importlib.metadata), so the file pins
exactly the tested set and nothing else that happens to share the environment.  Run it with
the interpreter of an environment where the suite just passed:

    .venv/bin/python requirements/freeze_tested.py
"""

from __future__ import annotations

import sys
import tomllib
from importlib import metadata
from pathlib import Path

from packaging.requirements import Requirement
from packaging.utils import canonicalize_name

ROOT = Path(__file__).resolve().parents[1]
EXTRAS = ("test", "server", "lab")


def main() -> int:
    project = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]
    pending = [Requirement(r) for r in project["dependencies"]]
    for extra in EXTRAS:
        pending += [Requirement(r) for r in project["optional-dependencies"][extra]]
    pinned: dict[str, str] = {}
    seen: set[tuple[str, frozenset[str]]] = set()
    while pending:
        requirement = pending.pop()
        name = canonicalize_name(requirement.name)
        key = (name, frozenset(requirement.extras))
        if key in seen:
            continue
        seen.add(key)
        distribution = metadata.distribution(requirement.name)
        pinned[name] = distribution.version
        for text in distribution.requires or []:
            child = Requirement(text)
            wanted = {"extra": ""}, *({"extra": e} for e in requirement.extras)
            if child.marker is None or any(child.marker.evaluate(m) for m in wanted):
                pending.append(child)
    lines = [f"{name}=={version}" for name, version in sorted(pinned.items())]
    header = ("# The tested set: written by requirements/freeze_tested.py from an environment "
              "where\n# the suite passed; CI installs with `pip install -c "
              "requirements/constraints.txt`.\n")
    (ROOT / "requirements" / "constraints.txt").write_text(header + "\n".join(lines) + "\n")
    print(f"{len(lines)} packages pinned", file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main())
