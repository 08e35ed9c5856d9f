"""The layout by stage of the data flow holds: every import points down the flow, and the
package's top level stays a short list of stages (issue 13; the project's own rule)."""

import importlib.util
import os

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)


def _checker():
    spec = importlib.util.spec_from_file_location(
        "check_imports", os.path.join(ROOT, "tools", "check_imports.py"))
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_every_import_points_down_the_data_flow():
    """No module imports from a later stage (and so there is no import circle between
    stages)."""
    assert _checker().upward_imports(os.path.join(ROOT, "src")) == []


def test_the_top_level_is_the_list_of_stages():
    """At most a dozen entries under src/polisect, each a stage of the flow or the package's
    face."""
    checker = _checker()
    entries = sorted(e for e in os.listdir(os.path.join(ROOT, "src", "polisect"))
                     if not e.startswith((".", "__pycache__")))
    assert len(entries) <= 12
    assert set(entries) <= set(checker.STAGES) | {"__init__.py"}
