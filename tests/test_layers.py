"""The package layout is the architecture diagram (docs/architecture.md): each layer is a folder,
and a module never imports a layer above its own. Checked on the source text (``ast``), so
imports inside functions count too.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "gridflash"

#: Layers from the bottom up; a module may import its own layer and the ones below it.
LAYERS = ("base", "thermo", "config", "plan", "compute", "store", "analysis", "runner", "cli")
#: Third-party packages a layer must not import (the thermodynamics layer knows no dask, xarray,
#: zarr or files; a block computation knows no dask or zarr).
FORBIDDEN = {
    "thermo": {"dask", "distributed", "xarray", "zarr", "click", "matplotlib"},
    "config": {"dask", "distributed", "xarray", "zarr", "click", "matplotlib"},
    "plan": {"dask", "distributed", "xarray", "zarr", "click", "matplotlib"},
    "compute": {"dask", "distributed", "xarray", "zarr", "click", "matplotlib"},
    "store": {"distributed", "click", "matplotlib"},
    "analysis": {"distributed", "click"},
    "runner": {"click", "matplotlib"},
}


def _layer(module: str) -> str:
    """Layer of a dotted module name inside the package (``gridflash.x.y``)."""
    parts = module.split(".")[1:]
    if not parts or parts[0] in ("__init__", "__main__"):
        return "cli"  # the package's front door re-exports every layer
    head = parts[0]
    if head in ("_errors", "_types", "_version"):
        return "base"
    return head if head in LAYERS else "cli"


def _module_name(path: Path) -> str:
    rel = path.relative_to(PACKAGE.parent).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def _imports(path: Path) -> list[str]:
    """Absolute names of the modules ``path`` imports (relative imports resolved)."""
    module = _module_name(path)
    package = module if path.name == "__init__.py" else module.rsplit(".", 1)[0]
    names = []
    for node in ast.walk(ast.parse(path.read_text())):
        if isinstance(node, ast.Import):
            names += [alias.name for alias in node.names]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")[: len(package.split(".")) - node.level + 1]
                target = ".".join(base + ([node.module] if node.module else []))
                names.append(target)
                if not node.module:  # from . import x
                    names += [f"{target}.{alias.name}" for alias in node.names]
            else:
                names.append(node.module or "")
    return names


SOURCES = sorted(PACKAGE.rglob("*.py"))


@pytest.mark.parametrize("path", SOURCES, ids=lambda p: str(p.relative_to(PACKAGE)))
def test_no_import_from_a_layer_above(path):
    own = _layer(_module_name(path))
    for name in _imports(path):
        if name.split(".")[0] == "gridflash":
            target = _layer(name)
            assert LAYERS.index(target) <= LAYERS.index(own), (
                f"{path.relative_to(PACKAGE)} ({own}) imports {name} ({target})"
            )
        else:
            assert name.split(".")[0] not in FORBIDDEN.get(own, set()), (
                f"{path.relative_to(PACKAGE)} ({own}) imports {name}"
            )


def test_every_module_sits_in_a_layer():
    """New modules go into a layer's folder; only the front door and the base sit at the top."""
    top = sorted(p.name for p in PACKAGE.glob("*.py"))
    assert set(top) <= {"__init__.py", "__main__.py", "_errors.py", "_types.py", "_version.py",
                        "cli.py", "runner.py"}
    folders = sorted(p.name for p in PACKAGE.iterdir() if p.is_dir() and p.name != "__pycache__")
    assert folders == sorted(LAYERS[1:7])


def test_the_check_sees_a_violation(tmp_path):
    """The import parser resolves relative imports, so a violation would be seen."""
    fake = PACKAGE / "thermo" / "_probe_for_layer_test.py"
    try:
        fake.write_text("from ..store import _reader\nimport xarray\n")
        names = _imports(fake)
    finally:
        fake.unlink()
    assert "gridflash.store" in names and "xarray" in names
    assert _layer("gridflash.store._reader") == "store"
    assert _layer("gridflash.thermo._probe_for_layer_test") == "thermo"


def test_documented_entry_points_are_exported(tmp_path):
    """docs/config.md and docs/running.md use gridflash.load_config and gridflash.run."""
    import gridflash
    from gridflash import config, runner

    assert gridflash.load_config is config.load_config and gridflash.run is runner.run
    spec = gridflash.load_config(PACKAGE.parent / "configs" / "small_test.toml")
    assert spec.shape == (5, 3, 6)
