"""The bundled sample IFC models, reachable from a source checkout and from an installed package.

The samples are written by ``sample_models/generate.py`` (deterministic,
byte-identical on every run) and committed as ``sample_models/*.ifc``. This
module finds them, in order:

1. ``$PLUMBFRAME_SAMPLES`` (a folder), if set;
2. ``sample_models/`` next to the ``analysis`` package (a checkout or an
   editable install);
3. ``<prefix>/share/plumbframe/sample_models`` (a regular install: the files
   are shipped as data files, see ``[tool.setuptools.data-files]``).

If only the generator is found, the sample is generated instead of copied.
"""
from __future__ import annotations

import importlib.util
import os
import shutil
import sys
import sysconfig
from pathlib import Path
from types import ModuleType

from .errors import AnalysisError

__all__ = ["sample_folders", "available_samples", "sample_path", "write_sample"]


def sample_folders() -> list[Path]:
    """Folders that may hold the sample models, most specific first."""
    out = []
    env = os.environ.get("PLUMBFRAME_SAMPLES")
    if env:
        out.append(Path(env))
    out.append(Path(__file__).resolve().parent.parent / "sample_models")
    for prefix in dict.fromkeys([sys.prefix, sysconfig.get_path("data")]):
        out.append(Path(prefix) / "share" / "plumbframe" / "sample_models")
    return [p for p in out if p.is_dir()]


def available_samples() -> list[str]:
    """Names of the samples found (``<name>.ifc`` in the first folder that has any)."""
    for folder in sample_folders():
        names = sorted(p.stem for p in folder.glob("*.ifc"))
        if names:
            return names
    return []


def sample_path(name: str) -> Path:
    """The bundled file of sample ``name``.

    Raises
    ------
    AnalysisError
        No sample of that name (the message lists the ones there are).
    """
    for folder in sample_folders():
        p = folder / f"{name}.ifc"
        if p.is_file():
            return p
    known = available_samples()
    listing = ", ".join(known) if known else "none found (is the package installed with its data files?)"
    raise AnalysisError(f"no sample model named {name!r}; available: {listing}")


def _generator(folder: Path) -> ModuleType | None:
    script = folder / "generate.py"
    if not script.is_file():
        return None
    name = "_plumbframe_sample_generator"
    if name in sys.modules:
        return sys.modules[name]
    spec = importlib.util.spec_from_file_location(name, script)
    if spec is None or spec.loader is None:
        return None
    module = importlib.util.module_from_spec(spec)
    sys.modules[name] = module  # dataclasses look their module up while the script runs
    try:
        spec.loader.exec_module(module)
    except Exception:
        del sys.modules[name]
        return None
    return module



def write_sample(name: str, path: str | os.PathLike) -> Path:
    """Write sample ``name`` to ``path`` (atomically: a temporary file moved into place)."""
    path = Path(path)
    folder = path.resolve().parent
    if not folder.is_dir():
        raise AnalysisError(f"{path}: the folder {folder} does not exist")
    source: Path | ModuleType | None
    try:
        source = sample_path(name)
    except AnalysisError:
        source = None
        for f in sample_folders():
            gen = _generator(f)
            if gen is not None and name in getattr(gen, "SAMPLES", {}):
                source = gen
                break
        if source is None:
            raise
    from .fileio import atomic_write

    def write(tmp: str) -> None:
        if isinstance(source, Path):
            shutil.copyfile(source, tmp)
        else:
            source.write_sample(name, tmp)

    atomic_write(path, write, suffix=".ifc")
    return path
