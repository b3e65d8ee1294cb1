"""The public API: ``__all__`` agrees with what exists and with the README."""

import importlib
import pkgutil
import re
from pathlib import Path

import pytest

import icing

ROOT = Path(__file__).resolve().parents[1]


@pytest.mark.parametrize("name", icing.__all__)
def test_every_exported_name_resolves(name):
    assert getattr(icing, name) is not None


def _modules():
    for info in pkgutil.walk_packages(icing.__path__, "icing."):
        if not any(part.startswith("_") for part in info.name.split(".")):
            yield info.name.removeprefix("icing.")


@pytest.mark.parametrize("module", sorted(_modules()))
def test_module_all_is_literal_and_complete(module):
    mod = importlib.import_module(f"icing.{module}")
    assert isinstance(getattr(mod, "__all__", None), list), (
        f"icing.{module} lacks a literal __all__"
    )
    for name in mod.__all__:
        assert hasattr(mod, name), f"icing.{module}.__all__ names missing {name}"


def test_readme_api_names_are_exported():
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    for name in set(re.findall(r"`icing\.([a-z_]+)`", text)):
        if name in icing._MOVED_TO_CALC:
            continue  # documented as an old name that still works for one release
        assert name in icing.__all__, f"README documents icing.{name}, which is not exported"
    for name in set(re.findall(r"`icing\.calc\.([A-Za-z_]+)`", text)):
        assert name in icing.calc.__all__, f"README documents icing.calc.{name}, not exported"


@pytest.mark.parametrize("name", sorted(icing._MOVED_TO_CALC))
def test_old_top_level_physics_names_warn_and_still_work(name):
    with pytest.warns(DeprecationWarning, match=f"icing.calc.{name}"):
        old = getattr(icing, name)
    assert old is getattr(icing.calc, name)


def test_unknown_attribute_raises():
    with pytest.raises(AttributeError):
        icing.not_a_function  # noqa: B018
