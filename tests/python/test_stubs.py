"""The type stubs of lotwise._core name everything the compiled module offers."""

from __future__ import annotations

import ast

import lotwise
from lotwise import _core

from conftest import ROOT


def test_core_stub_covers_the_module():
    tree = ast.parse((ROOT / "bindings" / "python" / "lotwise" / "_core.pyi").read_text())
    stub = {}
    for node in tree.body:
        if isinstance(node, ast.ClassDef):
            stub[node.name] = {m.name for m in node.body if isinstance(m, ast.FunctionDef)} | {
                m.target.id for m in node.body if isinstance(m, ast.AnnAssign)}
        elif isinstance(node, ast.FunctionDef):
            stub[node.name] = set()
        elif isinstance(node, ast.AnnAssign):
            stub[node.target.id] = set()
    missing = []
    for name in dir(_core):
        if name.startswith("__"):
            continue
        if name not in stub:
            missing.append(name)
            continue
        obj = getattr(_core, name)
        if isinstance(obj, type) and not issubclass(obj, BaseException):
            missing += [f"{name}.{a}" for a in dir(obj)
                        if not a.startswith("_") and a not in stub[name]]
    assert missing == []
    assert [name for name in stub if not hasattr(_core, name)] == []


def test_public_names_are_documented():
    undocumented = []
    for name in lotwise.__all__:
        obj = getattr(lotwise, name)
        if name.startswith("__"):
            continue
        if not (obj.__doc__ or "").strip():
            undocumented.append(name)
        if isinstance(obj, type):
            for attr, value in vars(obj).items():
                if attr.startswith("_"):
                    continue
                fn = value.fget if isinstance(value, property) else value
                if callable(fn) and not (getattr(fn, "__doc__", None) or "").strip():
                    undocumented.append(f"{name}.{attr}")
    assert undocumented == []
