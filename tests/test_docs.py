"""The Python API's documentation (issue 13 item 9): every exported name resolves, every public
function and class carries a numpydoc docstring, and docs/API.md is what docs/make_api.py writes.

The docstrings are parsed by numpydoc's own parser (``numpydoc.docscrape``, from the test
extras), an independent reading of the format: a section that numpydoc does not see as one
(a misspelt heading, a missing underline) counts as missing.
"""

from __future__ import annotations

import ast
import importlib
import importlib.util
import inspect
import pkgutil
import textwrap
import warnings
from pathlib import Path

import pytest
from numpydoc.docscrape import ClassDoc, FunctionDoc

ROOT = Path(__file__).resolve().parents[1]

#: The subpackages whose every public (non-underscore) function and class is exported and
#: documented. siting.presentation exports a chosen set (its page-building helpers are reached
#: by their modules) and siting.cli is the command line, not an API.
WHOLE = ("siting.physics", "siting.dispersion", "siting.readers", "siting.runs", "siting.output")
PACKAGES = ("siting", *WHOLE, "siting.presentation")


def _modules(package: str) -> list[str]:
    """The public module names of a subpackage (siting/<sub>/<name>.py, no underscore)."""
    path = importlib.import_module(package).__path__
    return sorted(m.name for m in pkgutil.iter_modules(path) if not m.name.startswith("_"))


def _public_definitions(package: str) -> dict[str, str]:
    """Every non-underscore function and class defined in a module of ``package``, with the
    module that defines it."""
    found = {}
    for name in _modules(package):
        module = importlib.import_module(f"{package}.{name}")
        for attr, value in vars(module).items():
            if attr.startswith("_") or not (inspect.isfunction(value) or inspect.isclass(value)):
                continue
            if value.__module__ == module.__name__:
                found[attr] = module.__name__
    return found


def _exported() -> list[tuple[str, str, object]]:
    """(package, name, object) for every name in every package's ``__all__``."""
    rows = []
    for package in PACKAGES:
        module = importlib.import_module(package)
        rows += [(package, name, getattr(module, name)) for name in module.__all__]
    return rows


def _parse(obj):
    """numpydoc's reading of a docstring; a warning of numpydoc (an unknown section) is raised."""
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        if inspect.isclass(obj):
            return ClassDoc(obj, config={"show_class_members": False})
        return FunctionDoc(obj)


def _documented_names(parsed, *sections: str) -> set[str]:
    """The names a docstring documents in ``sections`` ("x, y : float" names two)."""
    names = set()
    for section in sections:
        for item in parsed[section]:
            names |= {n.strip().lstrip("*") for n in item.name.split(",") if n.strip()}
    return names


def _signature_names(obj) -> list[str]:
    """The parameters a caller passes (``self``/``cls`` left out; ``*args`` as ``args``)."""
    try:
        signature = inspect.signature(obj)
    except (TypeError, ValueError):
        return []
    return [p for p in signature.parameters if p not in ("self", "cls")]


def _returns_value(func) -> bool:
    """Whether a function gives something back: an annotation other than None, else a
    ``return <value>`` or a ``yield`` in its own body (nested functions left out)."""
    func = inspect.unwrap(func)
    annotation = inspect.signature(func).return_annotation
    if annotation is not inspect.Signature.empty:
        return annotation not in (None, "None")
    tree = ast.parse(textwrap.dedent(inspect.getsource(func)))
    body = tree.body[0]
    stack = list(body.body)
    while stack:
        node = stack.pop()
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef, ast.Lambda)):
            continue
        if isinstance(node, (ast.Yield, ast.YieldFrom)):
            return True
        value = getattr(node, "value", None) if isinstance(node, ast.Return) else None
        if value is not None and not (isinstance(value, ast.Constant) and value.value is None):
            return True
        stack.extend(ast.iter_child_nodes(node))
    return False


def _faults(obj, where: str) -> list[str]:
    """What is missing from the docstring of one function, method or class."""
    if not (inspect.getdoc(obj) or "").strip():
        return [f"{where}: no docstring"]
    try:
        parsed = _parse(obj)
    except Warning as exc:
        return [f"{where}: numpydoc: {exc}"]
    faults = []
    if not parsed["Summary"]:
        faults.append(f"{where}: no summary line")
    is_error = inspect.isclass(obj) and issubclass(obj, BaseException)
    params = [] if is_error else _signature_names(obj)  # an error takes its message, as Exception
    sections = ("Parameters", "Other Parameters")
    if inspect.isclass(obj):
        sections += ("Attributes",)  # a dataclass's or model's fields are its parameters
    documented = _documented_names(parsed, *sections)
    if params and not (parsed["Parameters"] or (inspect.isclass(obj) and parsed["Attributes"])):
        faults.append(f"{where}: takes parameters but has no Parameters section")
    elif params:
        missing = [p for p in params if p not in documented]
        if missing:
            faults.append(f"{where}: parameters not documented: {', '.join(missing)}")
    if not inspect.isclass(obj):
        unknown = _documented_names(parsed, "Parameters") - set(params)
        if unknown:
            faults.append(f"{where}: documents no such parameter: {', '.join(sorted(unknown))}")
        if _returns_value(obj) and not (parsed["Returns"] or parsed["Yields"]):
            faults.append(f"{where}: returns a value but has no Returns section")
    return faults


def _members(cls) -> list[tuple[str, object, bool]]:
    """(name, function, is_property) of a class's own public methods and properties."""
    rows = []
    for name, value in vars(cls).items():
        if name.startswith("_"):
            continue
        if isinstance(value, property):
            rows.append((name, value.fget, True))
        elif isinstance(value, (staticmethod, classmethod)):
            rows.append((name, value.__func__, False))
        elif inspect.isfunction(value):
            rows.append((name, value, False))
    return rows


def _all_faults() -> list[str]:
    """Every docstring fault of every exported function, class and public method."""
    faults = []
    seen = set()
    for _, _, obj in _exported():
        if not (inspect.isfunction(obj) or inspect.isclass(obj)) or id(obj) in seen:
            continue
        seen.add(id(obj))
        where = f"{obj.__module__}.{obj.__qualname__}"
        faults += _faults(obj, where)
        if inspect.isclass(obj) and not issubclass(obj, BaseException):
            for member, func, is_property in _members(obj):
                if is_property:  # documented like an attribute: a summary line is enough
                    if not (inspect.getdoc(func) or "").strip():
                        faults.append(f"{where}.{member}: no docstring")
                else:
                    faults += _faults(func, f"{where}.{member}")
    return faults


def _make_api():
    """docs/make_api.py as a module (docs/ is no package)."""
    spec = importlib.util.spec_from_file_location("make_api", ROOT / "docs" / "make_api.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.mark.parametrize("package", PACKAGES)
def test_every_exported_name_resolves(package):
    """Each name of ``__all__`` is reachable (imported on first use) and listed by dir()."""
    module = importlib.import_module(package)
    assert module.__all__, package
    for name in module.__all__:
        assert getattr(module, name) is not None, f"{package}.{name}"
    assert set(module.__all__) <= set(dir(module))


@pytest.mark.parametrize("package", WHOLE)
def test_a_subpackage_exports_each_public_definition_from_its_module(package):
    """The one place: every public function and class of the subpackage's modules is in its
    ``__all__`` (a new one must be added, or named with an underscore), as that very object.
    A name equal to one of the subpackage's modules cannot be exported (the module would
    shadow it): ``siting.runs.sensitivity.sensitivity`` is the one such function."""
    module = importlib.import_module(package)
    modules = set(_modules(package))
    defined = _public_definitions(package)
    assert set(module.__all__) == set(defined) - modules
    for name in module.__all__:
        assert getattr(module, name) is getattr(importlib.import_module(defined[name]), name)


@pytest.mark.parametrize("package", PACKAGES[1:])
def test_no_exported_name_is_a_module_name(package):
    assert not set(importlib.import_module(package).__all__) & set(_modules(package))


def test_every_exported_function_and_class_has_a_numpydoc_docstring():
    """Summary, Parameters naming every parameter (Attributes for a dataclass's or model's
    fields), Returns where a value comes back; also each exported class's public methods."""
    faults = _all_faults()
    assert not faults, f"{len(faults)} docstring faults:\n" + "\n".join(faults)


def _good(distance_m, height_m=0.0):
    """Spread at a distance [m].

    Parameters
    ----------
    distance_m, height_m : float
        Distance and height [m].

    Returns
    -------
    float
        The spread [m].
    """
    return distance_m + height_m


def _no_sections(distance_m):
    """Spread at a distance [m]."""
    return distance_m


def _misspelt(distance_m):
    """Spread at a distance [m].

    Parameter
    ---------
    distance_m : float
        Distance [m].
    """
    return distance_m


def _missing_one(distance_m, height_m):
    """Spread at a distance [m].

    Parameters
    ----------
    distance_m : float
        Distance [m].

    Returns
    -------
    float
        The spread [m].
    """
    return distance_m + height_m


def _writes(path) -> None:
    """Write a file.

    Parameters
    ----------
    path : Path
        Where.
    """


def test_the_docstring_check_finds_each_kind_of_fault():
    """The check itself, on functions made for it: a complete docstring passes; no sections,
    a misspelt heading (numpydoc does not see it as a section), a parameter left out and a
    value returned without Returns are each found; None returned needs no Returns."""
    assert _faults(_good, "good") == []
    assert _faults(_writes, "writes") == []
    assert any("no Parameters section" in f for f in _faults(_no_sections, "a"))
    assert any("no Returns section" in f for f in _faults(_no_sections, "a"))
    assert _faults(_misspelt, "b")  # numpydoc warns of the unknown section, or finds none
    assert _faults(_missing_one, "c") == ["c: parameters not documented: height_m"]


def test_api_page_is_what_make_api_writes():
    """docs/API.md is current: regenerating it from the code gives the same text."""
    page = (ROOT / "docs" / "API.md").read_text(encoding="utf-8")
    assert _make_api().render() == page, "docs/API.md is stale: run python docs/make_api.py"


def test_make_api_check_fails_on_a_stale_page(tmp_path, monkeypatch):
    """``--check`` exits 1 when the page differs, 0 when current (so CI could run it)."""
    make_api = _make_api()
    stale = tmp_path / "API.md"
    stale.write_text("# an old page\n", encoding="utf-8")
    monkeypatch.setattr(make_api, "PAGE", stale)
    assert make_api.main(["--check"]) == 1
    stale.write_text(make_api.render(), encoding="utf-8")
    assert make_api.main(["--check"]) == 0
