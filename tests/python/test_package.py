"""The package surface: __all__, the type stubs cover every export and every member."""
import ast
import enum
import os

import pytest

import qamsight as qs
from qamsight import theory


def stub_tree(name):
    path = os.path.join(os.path.dirname(qs.__file__), name)
    with open(path) as fh:
        return ast.parse(fh.read())


def top_level(tree):
    names, classes = set(), {}
    for node in tree.body:
        if isinstance(node, ast.ClassDef):
            names.add(node.name)
            classes[node.name] = node
        elif isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
            names.add(node.name)
        elif isinstance(node, ast.AnnAssign) and isinstance(node.target, ast.Name):
            names.add(node.target.id)
        elif isinstance(node, ast.Assign):
            names.update(t.id for t in node.targets if isinstance(t, ast.Name))
        elif isinstance(node, ast.ImportFrom):
            names.update(a.asname or a.name for a in node.names)
    return names, classes


def class_members(node):
    out = set()
    for item in node.body:
        if isinstance(item, (ast.FunctionDef, ast.AsyncFunctionDef)):
            out.add(item.name)
        elif isinstance(item, ast.AnnAssign) and isinstance(item.target, ast.Name):
            out.add(item.target.id)
        elif isinstance(item, ast.Assign):
            out.update(t.id for t in item.targets if isinstance(t, ast.Name))
    return out


OPERATORS = {"__iadd__", "__add__", "__iter__", "__len__", "__bool__"}


def runtime_members(cls):
    """Public attributes a class defines itself (pybind11 enums: their members)."""
    if hasattr(cls, "__members__"):
        return set(cls.__members__)
    return {n for n in vars(cls) if not n.startswith("_") or n in OPERATORS}


def test_all_names_exist():
    for name in qs.__all__:
        assert hasattr(qs, name), name
    assert len(set(qs.__all__)) == len(qs.__all__)
    assert set(theory.__all__) <= set(dir(theory))


def test_stubs_cover_every_export():
    names, _ = top_level(stub_tree("__init__.pyi"))
    missing = sorted(set(qs.__all__) - names)
    assert not missing, f"not in __init__.pyi: {missing}"
    tnames, _ = top_level(stub_tree("theory.pyi"))
    assert not sorted(set(theory.__all__) - tnames)


def test_stub_classes_match_the_runtime_classes():
    _, classes = top_level(stub_tree("__init__.pyi"))
    problems = []
    for name in qs.__all__:
        obj = getattr(qs, name)
        if not isinstance(obj, type) or issubclass(obj, BaseException) or name not in classes:
            continue
        stub = {m for m in class_members(classes[name]) if not m.startswith("__") or m in OPERATORS}
        runtime = runtime_members(obj)
        if runtime - stub:
            problems.append(f"{name}: missing in the stub {sorted(runtime - stub)}")
        if stub - runtime:
            problems.append(f"{name}: the stub has {sorted(stub - runtime)}, the module does not")
    assert not problems, "\n".join(problems)


def test_docstrings_everywhere():
    assert qs.__doc__ and "copy" in qs.__doc__ and "GIL" in qs.__doc__
    undocumented = [n for n in qs.__all__ if callable(getattr(qs, n)) and not (getattr(qs, n).__doc__ or "").strip()]
    assert not undocumented, undocumented


def test_enums_are_hashable_and_named():
    assert qs.Substream.awgn.name == "awgn" and int(qs.Substream.awgn) == 2
    assert {qs.SnrKind.eb_n0: 1}[qs.SnrKind.eb_n0] == 1
