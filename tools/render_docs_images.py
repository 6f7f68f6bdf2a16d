"""Regenerate every picture under docs/images/: report screenshots and add-on renders of three samples.

    .venv/bin/python tools/render_docs_images.py [--bpy-python PATH] [--only report|addon] [--samples a,b]

For each of the workshop portal (a plane frame), the braced office (a space
frame derived from physical elements) and the roof truss (a plane truss):

* ``report_<sample>_overview.png`` and ``report_<sample>_case.png``: the HTML
  report (``plumbframe analyze --report``) in headless Chromium, its model
  overview and its first load case or combination;
* ``addon_<sample>.png``: the Blender add-on's viewport render (through
  tools/render_docs_image.py in a Python that has Blender's module, bpy
  5.0.1, given by ``--bpy-python`` or ``PLUMBFRAME_BPY_PYTHON``); the
  workshop portal's is also ``addon_render.png``, the README's picture.

PNGs are reduced to a 256-colour palette so each stays a few hundred KB.
Needs ``chromium`` on PATH (Debian: ``apt-get install chromium``).
"""
from __future__ import annotations

import argparse
import os
import pathlib
import shutil
import subprocess
import sys
import tempfile

ROOT = pathlib.Path(__file__).resolve().parents[1]
OUT = ROOT / "docs" / "images"
SAMPLES = ("workshop_portal", "braced_office", "roof_truss")
#: diagram shown in the add-on render: My for frames, N for the pin-jointed truss
ADDON_QUANTITY = {"workshop_portal": "My", "braced_office": "My", "roof_truss": "N"}
CHROMIUM_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                  "--disable-background-networking", "--disable-component-update", "--disable-sync",
                  "--hide-scrollbars", "--virtual-time-budget=10000"]


def _chromium() -> str:
    for name in ("chromium", "chromium-browser", "google-chrome"):
        path = shutil.which(name)
        if path:
            return path
    raise SystemExit("chromium not found on PATH (Debian: apt-get install chromium)")


def _shrink(path: pathlib.Path, trim: bool = False) -> None:
    """A 256-colour palette PNG (flat drawings lose nothing visible); ``trim`` cuts the empty page below."""
    import numpy as np
    from PIL import Image

    with Image.open(path) as im:
        rgb = im.convert("RGB")
    if trim:
        a = np.asarray(rgb)
        differs = (a != a[-1:, :, :]).any(axis=(1, 2))
        last = int(np.flatnonzero(differs).max()) if differs.any() else a.shape[0] - 1
        rgb = rgb.crop((0, 0, a.shape[1], min(a.shape[0], last + 24)))
    small = rgb.quantize(colors=256, method=Image.Quantize.MEDIANCUT, dither=Image.Dither.NONE)
    small.save(path, optimize=True)


def _screenshot(html: pathlib.Path, png: pathlib.Path, size: str, work: pathlib.Path) -> None:
    profile = pathlib.Path(tempfile.mkdtemp(prefix="chromium-", dir=work))
    subprocess.run([_chromium(), *CHROMIUM_FLAGS, f"--user-data-dir={profile}", f"--screenshot={png}",
                    f"--window-size={size}", html.as_uri()], check=True, capture_output=True, timeout=300)
    if not png.exists():
        raise SystemExit(f"chromium wrote no screenshot of {html}")
    _shrink(png, trim=True)


def _part(text: str, start: str, end: str | None) -> str:
    """The report's head and <main> with only the part from ``start`` to ``end`` (screenshots of a section)."""
    a = text.index("<main>") + len("<main>")
    b = text.index(start)
    c = text.index(end, b) if end else len(text)
    return text[:a] + text[b:c] + "</main></body></html>"


def reports(samples, work: pathlib.Path) -> list[pathlib.Path]:
    from analysis.samples import write_sample

    out = []
    for name in samples:
        ifc = write_sample(name, work / f"{name}.ifc")
        html = work / f"{name}.html"
        subprocess.run([sys.executable, "-m", "analysis.cli", "analyze", str(ifc), "-o", str(work / f"{name}.out.ifc"),
                        "--report", str(html)], check=True, capture_output=True, timeout=900)
        text = html.read_text(encoding="utf-8")
        overview = work / f"{name}_overview.html"
        overview.write_text(_part(text, "<h2 id='overview'>", "<h3>Nodes</h3>"), encoding="utf-8")
        case = work / f"{name}_case.html"
        case.write_text(_part(text, "<h2 id='cases'>", "<p><b>Reactions</b>"), encoding="utf-8")
        for page, tag, size in ((overview, "overview", "1200,1500"), (case, "case", "1200,2300")):
            png = OUT / f"report_{name}_{tag}.png"
            _screenshot(page, png, size, work)
            out.append(png)
    return out


def addon(samples, bpy_python: str) -> list[pathlib.Path]:
    out = []
    for name in samples:
        png = OUT / f"addon_{name}.png"
        subprocess.run([bpy_python, str(ROOT / "tools" / "render_docs_image.py"), "--model", name, "--out", str(png),
                        "--quantity", ADDON_QUANTITY[name], "--size", "1200x800"], check=True, timeout=900,
                       env={**os.environ, "PYTHONPATH": str(ROOT)})
        _shrink(png)
        out.append(png)
        if name == "workshop_portal":
            shutil.copyfile(png, OUT / "addon_render.png")
            out.append(OUT / "addon_render.png")
    return out


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--bpy-python", default=os.environ.get("PLUMBFRAME_BPY_PYTHON", ""),
                        help="a Python with bpy 5.0.1 for the add-on renders")
    parser.add_argument("--only", choices=("report", "addon"))
    parser.add_argument("--samples", default=",".join(SAMPLES))
    args = parser.parse_args(argv)
    samples = [s for s in args.samples.split(",") if s]
    OUT.mkdir(parents=True, exist_ok=True)
    written = []
    with tempfile.TemporaryDirectory(prefix="pf-docs-") as tmp:
        work = pathlib.Path(tmp)
        if args.only != "addon":
            written += reports(samples, work)
        if args.only != "report":
            if not args.bpy_python:
                raise SystemExit("the add-on renders need --bpy-python (a Python with bpy 5.0.1) or --only report")
            written += addon(samples, args.bpy_python)
    for path in written:
        print(f"{path.relative_to(ROOT)}  {path.stat().st_size / 1024:.0f} KB")
    return 0


if __name__ == "__main__":
    sys.exit(main())
