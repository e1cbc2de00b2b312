"""The package surface: what wvr exports, the _core.pyi stub kept in step with the compiled
module, and documentation on every public name."""
import ast
import inspect
import os
import pathlib

import pytest

import wvr
from wvr import _core

# Used by the package itself to build wvr.FastModelStatus; not re-exported.
CORE_ONLY = {"FAST_STATUS_CODES", "fast_status_description"}


def stub_tree():
    stub = pathlib.Path(wvr.__file__).with_name("_core.pyi")
    return ast.parse(stub.read_text())


def stub_names(tree):
    """Top-level functions, classes and annotated constants of the stub, minus the TypedDicts
    and type aliases that exist only for type checkers."""
    functions, classes, constants = set(), {}, set()
    for node in tree.body:
        if isinstance(node, ast.FunctionDef):
            functions.add(node.name)
        elif isinstance(node, ast.ClassDef):
            if any(getattr(b, "id", None) == "TypedDict" for b in node.bases):
                continue
            classes[node.name] = {n.name for n in node.body if isinstance(n, ast.FunctionDef)}
        elif isinstance(node, ast.AnnAssign):
            constants.add(node.target.id)
    return functions, classes, constants


def test_everything_in_all_is_exported():
    for name in wvr.__all__:
        assert hasattr(wvr, name), name
    public_core = {n for n in dir(_core) if not n.startswith("_")} - CORE_ONLY
    assert public_core <= set(wvr.__all__)
    assert isinstance(wvr.__version__, str) and wvr.__version__.count(".") == 2


def test_stub_matches_the_compiled_module():
    functions, classes, constants = stub_names(stub_tree())
    module_functions = {n for n, v in vars(_core).items()
                        if not n.startswith("_") and inspect.isbuiltin(v)}
    module_classes = {n for n, v in vars(_core).items() if inspect.isclass(v)}
    assert functions == module_functions
    assert set(classes) == module_classes
    assert constants == {"FAST_STATUS_CODES", "__version__"}
    for name, members in classes.items():
        cls = getattr(_core, name)
        actual = {m for m in vars(cls) if not m.startswith("_")} | (members & {"__init__", "__len__"})
        if issubclass(cls, Exception):
            continue
        assert members == actual, name


@pytest.mark.optional_dependency("the MeasurementSet part is built only with casacore")
def test_archive_stub_matches_its_compiled_module():
    if not wvr.HAS_MEASUREMENT_SETS:
        assert os.environ.get("WVR_EXPECT_ARCHIVE") != "1", "built with casacore, no wvr._archive"
        pytest.skip("libwvr built without casacore")
    from wvr import _archive
    stub = pathlib.Path(wvr.__file__).with_name("_archive.pyi")
    functions, classes, _ = stub_names(ast.parse(stub.read_text()))
    module_functions = {n for n, v in vars(_archive).items()
                        if not n.startswith("_") and inspect.isbuiltin(v)}
    assert functions == module_functions
    assert classes == {}
    for name in functions:
        assert name in wvr.__all__, name
        # Keyword names and defaults as the stub states them (pybind11 signature line).
        signature = getattr(_archive, name).__doc__.splitlines()[0]
        stub_function = next(n for n in ast.parse(stub.read_text()).body
                             if isinstance(n, ast.FunctionDef) and n.name == name)
        for argument in stub_function.args.args + stub_function.args.kwonlyargs:
            assert argument.arg + ":" in signature, (name, argument.arg)


def test_public_names_are_documented():
    for name in wvr.__all__:
        obj = getattr(wvr, name)
        if callable(obj):
            assert obj.__doc__ and len(obj.__doc__) > 20, name
    for cls in (wvr.AtmosphereProfile, wvr.SkyModel, wvr.FastSkyModel, wvr.Radiometer,
                wvr.SiteConfig):
        for member, value in vars(cls).items():
            if member.startswith("_") or member in ("channel_count", "layer_count",
                                                    "polynomial_degree", "name",
                                                    "quadrature_points_per_sideband",
                                                    "geometry", "refraction",
                                                    "cosmic_background_k", "refractivity",
                                                    "min_elevation_deg", "model"):
                continue
            doc = value.__doc__ if not isinstance(value, property) else value.fget.__doc__
            assert doc, f"{cls.__name__}.{member}"
