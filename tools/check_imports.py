"""Check that every import inside polisect points down the data flow.

    python tools/check_imports.py [SRC_DIR]

The stages, in order: core, read, segment, measure, properties, trust, model3d, pipeline,
present, apps. A module may import from its own stage and from earlier ones only. Prints each
import that points to a later stage and exits 1 when there is any.
"""

from __future__ import annotations

import ast
import os
import sys

STAGES = ("core", "read", "segment", "measure", "properties", "trust", "model3d", "pipeline",
          "present", "apps")


def upward_imports(src: str) -> list[str]:
    """Imports from a later stage, as ``module -> target`` lines."""
    root = os.path.join(src, "polisect")
    found = []
    for folder, _, files in os.walk(root):
        for name in sorted(files):
            if not name.endswith(".py"):
                continue
            path = os.path.join(folder, name)
            parts = os.path.relpath(path, root).split(os.sep)
            stage = parts[0] if len(parts) > 1 else None
            if stage not in STAGES:
                continue
            with open(path, encoding="utf-8") as f:
                tree = ast.parse(f.read())
            package = parts[:-1]
            for node in ast.walk(tree):
                if not isinstance(node, ast.ImportFrom):
                    continue
                if node.level:
                    target = package[:len(package) - (node.level - 1)] \
                        + (node.module.split(".") if node.module else [])
                elif node.module and node.module.split(".")[0] == "polisect":
                    target = node.module.split(".")[1:]
                else:
                    continue
                head = target[0] if target else node.names[0].name
                if head in STAGES and STAGES.index(head) > STAGES.index(stage):
                    found.append(f"{'/'.join(parts)} -> {'.'.join(target) or head}")
    return found


def main() -> int:
    src = sys.argv[1] if len(sys.argv) > 1 else os.path.join(os.path.dirname(__file__), "..",
                                                             "src")
    bad = upward_imports(src)
    print("\n".join(bad) if bad else "every import points down the data flow")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
