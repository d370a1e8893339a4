"""The compiled kernels' on-disk cache follows the source of every kernel file.

numba's own cache index notices a change only in the file that defines a kernel, while a kernel
inlines kernels from other files; gridflash therefore keys its cache folder by a hash of all
kernel files (``thermo/kernels/_policy.py``).
"""

from __future__ import annotations

import shutil
from pathlib import Path

from gridflash.thermo.kernels import _policy, eos, flash

KERNELS = Path(_policy.__file__).resolve().parent


def test_key_changes_when_any_kernel_file_changes(tmp_path):
    copy = tmp_path / "kernels"
    shutil.copytree(KERNELS, copy, ignore=shutil.ignore_patterns("__pycache__"))
    before = _policy.source_key(copy)
    assert before == _policy.source_key(KERNELS)
    for name in ("eos.py", "split.py", "codes.py"):
        path = copy / name
        text = path.read_text()
        path.write_text(text + "\n# an edit\n")
        assert _policy.source_key(copy) != before, name
        path.write_text(text)
        assert _policy.source_key(copy) == before
    (copy / "new_family.py").write_text("X = 1\n")
    assert _policy.source_key(copy) != before


def test_compiled_kernels_are_cached_under_the_keyed_folder():
    folder = _policy.cache_dir()
    assert folder.name.endswith(_policy.source_key())
    for dispatcher in (eos.phase_cell, flash.flash_batch):
        path = Path(dispatcher._cache._cache_path)
        assert folder in path.parents or path.parent == folder
