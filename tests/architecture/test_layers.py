"""The shape of the code holds: imports point down the layers, and no modules import each other in a circle."""

from __future__ import annotations

from pathlib import Path

from tests.architecture import layers

ROOT = Path(__file__).resolve().parents[2]


def test_no_import_points_up_or_across_the_layers():
    assert layers.violations(ROOT) == []


def test_no_modules_import_each_other_in_a_circle():
    assert layers.cycles(ROOT) == []


def test_no_module_outgrows_one_reading():
    long = [f"{p.relative_to(ROOT)}: {n}" for p in sorted(ROOT.glob("[a-z]*/**/*.py"))
            if "migrations" not in p.parts and p.parts[len(ROOT.parts)] != "tests"
            and (n := len(p.read_text(encoding="utf-8").splitlines())) > 600]
    assert long == []


def _tree(tmp_path: Path, files: dict[str, str]) -> Path:
    for name, text in files.items():
        path = tmp_path / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text)
    for package in ("projects", "api", "chronology", "chronology/engine"):
        (tmp_path / package).mkdir(parents=True, exist_ok=True)
        (tmp_path / package / "__init__.py").touch()
    return tmp_path


def test_a_record_module_importing_the_api_is_caught(tmp_path):
    root = _tree(tmp_path, {"api/middleware.py": "REQUEST = None\n",
                            "projects/changes.py": "def f():\n    from api.middleware import REQUEST\n"})
    assert layers.violations(root) == ["projects.changes:2 -> api.middleware (projects may not import api)"]


def test_an_engine_module_importing_django_is_caught(tmp_path):
    root = _tree(tmp_path, {"chronology/engine/order.py": "import django.db\n"})
    assert layers.violations(root) == ["chronology.engine.order:1 -> django.db (the engine imports no django)"]


def test_a_downward_import_is_allowed(tmp_path):
    root = _tree(tmp_path, {"chronology/engine/order.py": "X = 1\n",
                            "projects/record.py": "from chronology.engine.order import X\n"})
    assert layers.violations(root) == []


def test_two_modules_importing_each_other_are_a_circle(tmp_path):
    root = _tree(tmp_path, {"chronology/a.py": "from chronology import b\n",
                            "chronology/b.py": "def f():\n    from chronology.a import g\n"})
    assert layers.cycles(root) == [["chronology.a", "chronology.b"]]


def test_an_import_for_annotations_only_is_not_a_circle(tmp_path):
    root = _tree(tmp_path, {"chronology/a.py": "from chronology import b\n",
                            "chronology/b.py": "from typing import TYPE_CHECKING\nif TYPE_CHECKING:\n"
                                               "    from chronology.a import A\n"})
    assert layers.cycles(root) == []
