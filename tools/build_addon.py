"""Build the installable plumbframe extension zip for Blender 4.2+ (made for Blender 5.0, Python 3.11).

The zip holds:

* the add-on (``addon/``) at the top of the archive, as Blender's extension
  system expects,
* the engine, ``analysis/``, copied in as the sub-package
  ``<extension>.analysis`` (so it cannot clash with another add-on's modules;
  the engine uses relative imports only, which this script checks),
* the wheels Blender does not ship (ifcopenshell and its pure-Python
  dependencies, shapely, scipy), listed in the manifest's ``wheels`` so that
  Blender installs them when the extension is enabled. Blender ships numpy
  (1.26 in Blender 5.0), so numpy is left out.

The wheels are fetched once per platform with ``pip download`` into
``build/addon-wheels/<platform>/`` and reused afterwards. The zip itself is
built by Blender's own ``blender_ext.py build`` (found in the ``bpy`` module
of the running interpreter, or given with ``--blender-ext``); without it the
same layout is zipped directly.

Usage::

    python tools/build_addon.py                        # this machine's platform -> dist/
    python tools/build_addon.py --platform all         # linux-x64, windows-x64, macos-arm64
    python tools/build_addon.py --output /tmp/pf.zip   # one platform, chosen file name

Prints the path of every zip it wrote, one per line.
"""
from __future__ import annotations

import argparse
import ast
import importlib.util
import os
import pathlib
import platform as _platform
import re
import shutil
import subprocess
import sys
import tomllib
import zipfile

ROOT = pathlib.Path(__file__).resolve().parents[1]
ADDON = ROOT / "addon"
ENGINE = ROOT / "analysis"

#: What the engine needs that Blender does not ship, pinned to the versions tested.
REQUIREMENTS = ("ifcopenshell==0.9.0.post1", "scipy==1.17.1")
#: Blender 5.0 ships numpy 1.26: resolve against it, then leave it out of the zip.
CONSTRAINTS = ("numpy>=1.26,<2",)
SHIPPED_BY_BLENDER = {"numpy", "requests", "certifi", "charset_normalizer", "idna", "urllib3", "zstandard", "cython"}
PYTHON = "3.11"

#: Blender platform -> pip platform tags accepted for it.
PLATFORM_TAGS = {
    "linux-x64": [f"manylinux_2_{v}_x86_64" for v in (17, 24, 27, 28, 31, 34)] + ["manylinux2014_x86_64"],
    "windows-x64": ["win_amd64"],
    "macos-arm64": [f"macosx_{v}_0_arm64" for v in (11, 12, 13, 14)] + [f"macosx_{v}_0_universal2" for v in (10, 11)],
}


class BuildError(Exception):
    pass


def host_platform() -> str:
    system = {"darwin": "macos", "windows": "windows", "linux": "linux"}.get(_platform.system().lower(), "?")
    machine = {"x86_64": "x64", "amd64": "x64", "aarch64": "arm64", "arm64": "arm64"}.get(_platform.machine().lower(), "?")
    return f"{system}-{machine}"


def manifest_version() -> str:
    with open(ADDON / "blender_manifest.toml", "rb") as fh:
        return tomllib.load(fh)["version"]


# --------------------------------------------------------------------------- checks
def check_engine_imports() -> None:
    """The engine is bundled as a sub-package: it must import itself relatively only."""
    bad = []
    for path in sorted(ENGINE.rglob("*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
        for node in ast.walk(tree):
            if isinstance(node, ast.Import):
                names = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
                names = [node.module]
            else:
                continue
            for name in names:
                if name == "analysis" or name.startswith("analysis.") or name == "bpy" or name.startswith("bpy."):
                    bad.append(f"{path.relative_to(ROOT)}:{node.lineno}: import {name}")
    if bad:
        raise BuildError("the engine must use relative imports (and never bpy) to be bundled:\n  " + "\n  ".join(bad))


# --------------------------------------------------------------------------- wheels
def fetch_wheels(platform: str, wheel_root: pathlib.Path, offline: bool) -> list[pathlib.Path]:
    """Wheels for ``platform`` (downloaded once, then reused), numpy and friends left out."""
    if platform not in PLATFORM_TAGS:
        raise BuildError(f"platform {platform!r} is not one of {', '.join(PLATFORM_TAGS)}")
    folder = wheel_root / platform
    stamp = folder / "requirements.txt"
    wanted = "\n".join((*REQUIREMENTS, *CONSTRAINTS)) + "\n"
    have = sorted(folder.glob("*.whl"))
    if not (have and stamp.exists() and stamp.read_text() == wanted):
        if offline:
            raise BuildError(f"no wheels for {platform} in {folder} and --offline was given")
        shutil.rmtree(folder, ignore_errors=True)
        folder.mkdir(parents=True)
        cmd = [sys.executable, "-m", "pip", "download", "--quiet", "--dest", str(folder),
               "--only-binary=:all:", "--python-version", PYTHON, "--implementation", "cp",
               "--abi", "cp" + PYTHON.replace(".", ""), "--abi", "abi3", "--abi", "none"]
        for tag in PLATFORM_TAGS[platform]:
            cmd += ["--platform", tag]
        cmd += [*REQUIREMENTS, *CONSTRAINTS]
        done = subprocess.run(cmd, capture_output=True, text=True)
        if done.returncode != 0:
            raise BuildError(f"pip download for {platform} failed:\n{done.stderr.strip()}")
        stamp.write_text(wanted)
        have = sorted(folder.glob("*.whl"))
    keep = []
    for whl in have:
        dist = whl.name.split("-")[0].lower().replace("-", "_")
        if dist not in SHIPPED_BY_BLENDER:
            keep.append(whl)
    return keep


# --------------------------------------------------------------------------- staging
def stage(stage_dir: pathlib.Path, wheels: list[pathlib.Path], platforms: list[str]) -> None:
    shutil.rmtree(stage_dir, ignore_errors=True)
    ignore = shutil.ignore_patterns("__pycache__", "*.pyc", ".*")
    shutil.copytree(ADDON, stage_dir, ignore=ignore)
    shutil.copytree(ENGINE, stage_dir / "analysis", ignore=ignore)
    wheel_dir = stage_dir / "wheels"
    wheel_dir.mkdir()
    names = []
    for whl in wheels:
        if whl.name not in names:
            shutil.copy2(whl, wheel_dir / whl.name)
            names.append(whl.name)
    text = (ADDON / "blender_manifest.toml").read_text(encoding="utf-8")
    extra = ("platforms = [" + ", ".join(f'"{p}"' for p in platforms) + "]\n"
             + "wheels = [\n" + "".join(f'  "./wheels/{n}",\n' for n in sorted(names)) + "]\n\n")
    first_table = re.search(r"^\[", text, flags=re.M)
    cut = first_table.start() if first_table else len(text)
    manifest = text[:cut] + extra + text[cut:]
    tomllib.loads(manifest)  # still valid TOML
    (stage_dir / "blender_manifest.toml").write_text(manifest, encoding="utf-8")


def find_blender_ext(explicit: str | None) -> pathlib.Path | None:
    if explicit:
        return pathlib.Path(explicit)
    env = os.environ.get("PLUMBFRAME_BLENDER_EXT")
    if env:
        return pathlib.Path(env)
    spec = importlib.util.find_spec("bpy")  # locates the module without importing it
    if spec is None or not spec.submodule_search_locations:
        return None
    base = pathlib.Path(next(iter(spec.submodule_search_locations)))
    found = sorted(base.glob("*/scripts/addons_core/bl_pkg/cli/blender_ext.py"))
    return found[-1] if found else None


def zip_stage(stage_dir: pathlib.Path, out: pathlib.Path, blender_ext: pathlib.Path | None) -> str:
    out.parent.mkdir(parents=True, exist_ok=True)
    if out.exists():
        out.unlink()
    if blender_ext is not None and blender_ext.exists():
        done = subprocess.run([sys.executable, str(blender_ext), "build", "--source-dir", str(stage_dir),
                               "--output-filepath", str(out)], capture_output=True, text=True)
        if done.returncode != 0 or not out.exists():
            raise BuildError(f"blender_ext.py build failed:\n{done.stdout}\n{done.stderr}".strip())
        return "blender_ext.py"
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as zf:
        for path in sorted(stage_dir.rglob("*")):
            if path.is_file():
                rel = path.relative_to(stage_dir).as_posix()
                zf.write(path, rel, compress_type=zipfile.ZIP_STORED if rel.endswith(".whl") else zipfile.ZIP_DEFLATED)
    return "zipfile"


def build(platforms: list[str], output: pathlib.Path | None = None, wheel_root: pathlib.Path | None = None,
          offline: bool = False, blender_ext: str | None = None, build_dir: pathlib.Path | None = None) -> list[pathlib.Path]:
    """Build one zip per platform; returns their paths."""
    if output is not None and len(platforms) != 1:
        raise BuildError("--output names one zip: give exactly one --platform with it")
    check_engine_imports()
    build_dir = build_dir or ROOT / "build"
    wheel_root = wheel_root or build_dir / "addon-wheels"
    version = manifest_version()
    tool = find_blender_ext(blender_ext)
    written = []
    for plat in platforms:
        wheels = fetch_wheels(plat, wheel_root, offline)
        stage_dir = build_dir / "addon-stage" / plat / "plumbframe"
        stage(stage_dir, wheels, [plat])
        out = output or ROOT / "dist" / f"plumbframe-{version}-{plat.replace('-', '_')}.zip"
        zip_stage(stage_dir, out, tool)
        written.append(out)
    return written


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description="Build the plumbframe Blender extension zip.")
    parser.add_argument("--platform", action="append", default=None,
                        help=f"Blender platform ({', '.join(PLATFORM_TAGS)} or 'all'); default: this machine's")
    parser.add_argument("--output", type=pathlib.Path, help="zip file to write (one platform only)")
    parser.add_argument("--wheel-dir", type=pathlib.Path, help="where downloaded wheels are kept (build/addon-wheels)")
    parser.add_argument("--offline", action="store_true", help="use only wheels already downloaded")
    parser.add_argument("--blender-ext", help="path of Blender's bl_pkg/cli/blender_ext.py")
    args = parser.parse_args(argv)
    platforms = args.platform or [host_platform()]
    if "all" in platforms:
        platforms = list(PLATFORM_TAGS)
    try:
        for path in build(platforms, args.output, args.wheel_dir, args.offline, args.blender_ext):
            print(path)
    except BuildError as exc:
        print(f"build_addon: {exc}", file=sys.stderr)
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
