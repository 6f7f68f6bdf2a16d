"""The ``plumbframe`` command: check, analyse and write results back into the IFC model.

Exit codes: 0 success, 2 bad input (unreadable file, missing data, bad
options, unwritable output), 3 unstable model (a mechanism), 1 an internal
error (a bug: please report it with the ``--verbose`` traceback).

This is the only module of the engine that talks to the user.
"""
from __future__ import annotations

import argparse
import contextlib
import json
import logging
import math
import os
import sys
import time
import traceback
import warnings
from collections.abc import Iterator
from typing import TYPE_CHECKING, Any, Callable, Sequence

from . import cli_checks as _checks
from .collector import collector_paused

if TYPE_CHECKING:
    from .model import FloatArray

__all__ = ["main", "build_parser", "summary_table", "EXIT_OK", "EXIT_BAD_INPUT", "EXIT_UNSTABLE"]

EXIT_OK = 0
EXIT_INTERNAL = 1
EXIT_BAD_INPUT = 2
EXIT_UNSTABLE = 3

CAUTION = ("Results are an aid to a qualified engineer: check them, design to the local code, "
           "and have the design reviewed by a licensed engineer.")

_CHECK_EPILOG = """\
examples:
  plumbframe check office.ifc
  plumbframe check office.ifc --plane --json counts.json
  plumbframe check truss.ifc --plane --condense-pinned --inextensible --by-joint
  plumbframe check office.ifc --model "Frame A" --condense-pinned

exit codes: 0 stable, 2 bad input, 3 unstable (a mechanism)
"""

_ANALYZE_EPILOG = """\
examples:
  plumbframe analyze portal.ifc                      # writes portal.results.ifc beside the input
  plumbframe analyze portal.ifc -o out.ifc --json results.json --report report.html
  plumbframe analyze truss.ifc --plane --quiet
  plumbframe analyze office.ifc --merge-tolerance 0.02 --inextensible

exit codes: 0 done, 2 bad input, 3 unstable (nothing is written)
"""

_SAMPLE_EPILOG = """\
examples:
  plumbframe sample --list
  plumbframe sample workshop_portal -o portal.ifc
"""

_MAIN_EPILOG = """\
commands:
  check     counts, stability and mechanisms of the analytical model
  analyze   analyse every load case and combination; write results back into a copy of the IFC
  sample    write one of the bundled sample models
  batch     analyse many models at once (on Dask where installed); a summary table and index page

examples:
  plumbframe sample workshop_portal -o portal.ifc
  plumbframe check portal.ifc
  plumbframe analyze portal.ifc --json results.json --report report.html

""" + CAUTION


# --------------------------------------------------------------------------- console
class _Console:
    """Messages to stdout, problems and progress to stderr; progress only on a terminal."""

    def __init__(self, quiet: bool = False, verbose: bool = False, out=None, err=None):
        self.quiet, self.verbose = quiet, verbose
        self.out = out or sys.stdout
        self.err = err or sys.stderr
        self.tty = bool(getattr(self.err, "isatty", lambda: False)()) and not quiet
        self._step_started: float | None = None
        self._last = ""
        self.out_failed = False
        self.written: list[str] = []  # outputs in place (for the message after an interrupt)

    def say(self, text: str = "") -> None:
        if not self.quiet and not self.out_failed:
            self._clear()
            try:
                print(text, file=self.out)
                self.out.flush()
            except (BrokenPipeError, OSError, ValueError) as exc:  # stdout closed (| head) or full (> /dev/full)
                self.out_failed = True
                _checks.quiet_stdout_errors(self.out)
                if not isinstance(exc, BrokenPipeError):
                    reason = getattr(exc, "strerror", None) or str(exc)
                    done = f"; written: {', '.join(self.written)}" if self.written else ""
                    self.warn(f"the summary could not be printed on standard output ({reason}){done}")

    def info(self, text: str) -> None:
        if self.verbose:
            self._clear()
            print(text, file=self.err)

    def warn(self, text: str) -> None:
        self._clear()
        print(f"warning: {text}", file=self.err)

    def error(self, text: str) -> None:
        self._clear()
        print(f"plumbframe: error: {text}", file=self.err)

    def progress(self, step: str) -> None:
        """One step of a long job; shown as a single updating line on a terminal."""
        if self.verbose:
            print(f"... {step}", file=self.err)
            return
        if not self.tty:
            return
        line = f"\r  {step} ..."
        pad = max(0, len(self._last) - len(line))
        self.err.write(line + " " * pad)
        self.err.flush()
        self._last = line

    def _clear(self) -> None:
        if self._last and self.tty:
            self.err.write("\r" + " " * len(self._last) + "\r")
            self.err.flush()
            self._last = ""


# --------------------------------------------------------------------------- parser
def _version() -> str:
    from . import __version__

    return __version__


def _add_common(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("reading the model")
    g.add_argument("--model", metavar="NAME", help="which IfcStructuralAnalysisModel to use (name or GlobalId) "
                   "when the file holds several")
    g.add_argument("--merge-tolerance", type=_checks.nonnegative_length, default=0.01, metavar="M",
                   help="distance in metres within which physical member ends are joined (default 0.01)")
    g.add_argument("--materials", metavar="FILE.toml", help="material map: IFC material names (exact or glob), "
                   "IFC classes and elements without material to grades or values (format in the README)")
    g.add_argument("--sections", metavar="FILE.toml", help="section map: A, Iy, Iz, J by element, type or profile "
                   "name (exact or glob), replacing the file's, and a default for members without a profile "
                   "(format in the README)")
    g = p.add_argument_group("idealisation (whole model; a per-member property can override)")
    g.add_argument("--inextensible", action="store_true",
                   help="every member axially rigid, pin-jointed truss bars included")
    g.add_argument("--condense-pinned", action="store_true", help="reduce rotations at pinned ends out of the unknowns")
    dim = g.add_mutually_exclusive_group()
    dim.add_argument("--plane", action="store_true", help="plane-frame analysis in the frame's own plane "
                     "(3 unknowns per joint); the default where the analysis model declares in-plane loading")
    dim.add_argument("--space", action="store_true", help="space-frame analysis (6 unknowns per joint) even where "
                     "the analysis model declares in-plane loading")
    g.add_argument("--shear", action="store_true", help="include shear deformation (default: Euler-Bernoulli members)")
    g.add_argument("--solver", choices=("auto", "cholmod", "pardiso", "superlu"), default="auto",
                   help="sparse solver (default auto: the fastest installed)")
    g = p.add_argument_group("the frame of a physical model (files without a structural analysis model)")
    g.add_argument("--select", metavar="QUERY", help="the elements that make the frame, as an ifcopenshell selector "
                   "query (default: load-bearing IfcBeam, IfcColumn, IfcMember less mullions, stringers and the like)")
    g.add_argument("--exclude", metavar="QUERY", help="leave the elements this selector query finds out of the frame")
    g.add_argument("--supports", metavar="QUERY[:fixed|pinned]", action="append", default=[],
                   help="support the lowest ends of the elements this query finds, and member ends bearing on them "
                        "(repeatable; replaces the default: column bases, ends bearing on walls, slabs, footings, "
                        "piles, else the lowest nodes pinned)")
    g.add_argument("--members", choices=("auto", "frame", "truss"), default="auto",
                   help="IfcMember idealisation: auto (default: diagonals between two joints are pin-ended bars, "
                        "studs and continuous members frame members), frame, or truss")
    g.add_argument("--strict", action="store_true", help="an element that cannot become a member, or a part "
                   "connected to no support, is an error instead of being left out")
    g = p.add_argument_group("output")
    v = g.add_mutually_exclusive_group()
    v.add_argument("-q", "--quiet", action="store_true", help="print only errors")
    v.add_argument("-v", "--verbose", action="store_true", help="log each step; show tracebacks")


def build_parser() -> argparse.ArgumentParser:
    fmt = argparse.RawDescriptionHelpFormatter
    parser = argparse.ArgumentParser(
        prog="plumbframe", formatter_class=fmt,
        description="Structural analysis of frames inside the building's IFC model.",
        epilog=_MAIN_EPILOG)
    parser.add_argument("--version", action="version", version=f"plumbframe {_version()}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    p = sub.add_parser("check", formatter_class=fmt, epilog=_CHECK_EPILOG,
                       help="counts, stability and mechanisms",
                       description="Read the analytical model and report its kinematic and static indeterminacy, "
                                   "which constraints count and which are redundant, and any mechanism.")
    p.add_argument("input", metavar="MODEL.ifc")
    p.add_argument("--json", metavar="FILE", help="also write the counts as plumbframe.results/1 JSON (no cases)")
    p.add_argument("--by-joint", action="store_true",
                   help="also show the count joint by joint: each joint's unknowns, the components its support "
                        "holds, those a constraint eliminates (by which member, body or diaphragm) and the own "
                        "rotations of hinged ends there, adding up to the totals")
    _add_common(p)

    p = sub.add_parser("analyze", aliases=["analyse"], formatter_class=fmt, epilog=_ANALYZE_EPILOG,
                       help="analyse and write results back",
                       description="Analyse every load case and combination and write the results into a copy of "
                                   "the IFC file (result groups, reactions, internal forces, PF_ property sets).")
    p.add_argument("input", metavar="MODEL.ifc")
    p.add_argument("-o", "--output", metavar="OUT.ifc", help="where the IFC with results goes "
                   "(default: MODEL.results.ifc beside the input)")
    p.add_argument("--json", metavar="RESULTS.json", help="also write the results as plumbframe.results/1 JSON")
    p.add_argument("--report", metavar="REPORT.html", help="also write a self-contained HTML report "
                   "(with the complete tables as CSV files beside it)")
    p.add_argument("--stations", choices=("ends", "extremes", "all"), default="extremes",
                   help="stations of the member diagrams written to the IFC: the member ends; the ends, the "
                        "extremes of each internal force and deflection and both sides of concentrated loads "
                        "(default); or every station (the JSON always has every station)")
    p.add_argument("--overwrite-input", action="store_true",
                   help="allow -o to name the input file itself (it is never overwritten otherwise)")
    _add_stability_options(p)
    _add_common(p)
    analyze_parser = p

    p = sub.add_parser("sample", formatter_class=fmt, epilog=_SAMPLE_EPILOG, help="write a bundled sample model",
                       description="Write one of the bundled sample IFC models.")
    p.add_argument("name", nargs="?", metavar="NAME")
    p.add_argument("-o", "--output", metavar="FILE.ifc")
    p.add_argument("--list", action="store_true", help="list the sample names and exit")
    v = p.add_mutually_exclusive_group()
    v.add_argument("-q", "--quiet", action="store_true", help="print only errors")
    v.add_argument("-v", "--verbose", action="store_true", help="show tracebacks")

    from .batch import add_batch_parser

    add_batch_parser(sub, analyze_parser)  # takes every analyze option, so add it last
    return parser


# --------------------------------------------------------------------------- entry point
def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit code (the console script exits with it)."""
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # --help, --version, usage errors (argparse uses 2)
        return int(exc.code or 0)
    if not args.command:
        parser.print_help()
        return EXIT_BAD_INPUT
    con = _Console(quiet=args.quiet, verbose=args.verbose)
    restore = _setup_logging(args.verbose, args.quiet)
    try:
        with _checks.terminate_as_interrupt(), warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")  # numpy's RuntimeWarnings would leak source lines: kept for --verbose
            with collector_paused(), _small_pages():  # see analysis.collector: the bulk phases make no cycles
                code = _run(args, con)
        if args.verbose:
            for w in caught:
                con.info(f"python warning: {w.category.__name__}: {w.message} ({w.filename}:{w.lineno})")
        return code
    finally:
        restore()


@contextlib.contextmanager
def _small_pages() -> Iterator[None]:
    """numpy without its transparent-huge-page advice for the command's run, restored afterwards.

    numpy advises huge pages for every large array; on these virtual machines the first touch of such
    memory stalls in the kernel (measured: touching 1 GB of fresh arrays 2.0 s with the advice, 0.4 s
    without). The command owns its process, so it goes without; a host application that imports the
    engine (the add-on in Blender) keeps numpy's setting.
    """
    advise = _hugepage_switch()
    if advise is None:  # a numpy without the switch: its own default
        yield
        return
    before = advise(False)
    try:
        yield
    finally:
        advise(before)


def _hugepage_switch() -> Callable[[bool], bool] | None:
    """numpy's private switch of its huge-page advice (returns the previous setting), or None."""
    import importlib

    for name in ("numpy._core.multiarray", "numpy.core.multiarray"):  # numpy 2, numpy 1.26
        try:
            switch = getattr(importlib.import_module(name), "_set_madvise_hugepage", None)
        except ImportError:
            continue
        if switch is not None:
            return switch
    return None


def _run(args, con) -> int:
    from .errors import AnalysisError, UnstableStructureError

    try:
        if args.command == "check":
            return _check(args, con)
        if args.command in ("analyze", "analyse"):
            return _analyze(args, con)
        if args.command == "batch":
            from .batch import batch

            return batch(args, con)
        return _sample(args, con)
    except UnstableStructureError as exc:
        _print_unstable(con, exc)
        return EXIT_UNSTABLE
    except AnalysisError as exc:
        if args.verbose:
            traceback.print_exc(file=con.err)
        con.error(str(exc))
        return EXIT_BAD_INPUT
    except KeyboardInterrupt as exc:
        what = "terminated" if isinstance(exc, _checks.Terminated) else "interrupted"
        if con.written:
            con.error(f"{what} after writing {', '.join(con.written)}")
        else:
            con.error(f"{what}; nothing was written")
        return 143 if isinstance(exc, _checks.Terminated) else 130
    except (FloatingPointError, OverflowError) as exc:
        if args.verbose:
            traceback.print_exc(file=con.err)
        con.error(f"numbers of the model are out of range ({exc}); check the magnitudes of coordinates, loads, "
                  "moduli and units")
        return EXIT_BAD_INPUT
    except Exception as exc:  # a bug: say so plainly
        if args.verbose:
            traceback.print_exc(file=con.err)
        con.error(f"internal error ({type(exc).__name__}: {exc}); run again with --verbose for the details")
        return EXIT_INTERNAL


def _setup_logging(verbose: bool, quiet: bool):
    """Send the engine's log to stderr for this run; returns a callable that puts things back."""
    logger = logging.getLogger("analysis")
    saved = (logger.level, logger.propagate)
    handler = logging.StreamHandler(sys.stderr)
    handler.setFormatter(logging.Formatter("%(levelname)s: %(message)s"))
    handler.setLevel(logging.INFO if verbose else logging.ERROR)
    logger.addHandler(handler)
    logger.propagate = False
    # engine warnings are gathered and summarised (also those only logged); log lines only with --verbose
    logger.setLevel(logging.INFO if verbose else logging.WARNING)
    _LOGGED.clear()
    collector = _Collector()
    logger.addHandler(collector)

    def restore() -> None:
        logger.removeHandler(handler)
        logger.removeHandler(collector)
        logger.setLevel(saved[0])
        logger.propagate = saved[1]

    return restore


_LOGGED: list[str] = []  # warnings the engine logged during this run (the summary lists them)


class _Collector(logging.Handler):
    def __init__(self) -> None:
        super().__init__(logging.WARNING)

    def emit(self, record: logging.LogRecord) -> None:
        if getattr(record, "plumbframe_noted", False):  # reported elsewhere (the reader's notes)
            return
        try:
            text = record.getMessage()
        except Exception:  # a malformed log call must not end the run
            return
        if text not in _LOGGED:
            _LOGGED.append(text)


# --------------------------------------------------------------------------- shared steps
def _options(args, model=None):
    """The idealisation: the flags, and a plane analysis where the analysis model declares in-plane loading."""
    from .model import AnalysisOptions

    if args.plane:
        plane = True
    elif args.space:
        plane = False
    else:
        plane = True if getattr(model, "plane", False) else None
    return AnalysisOptions(plane=plane, inextensible=args.inextensible,
                           condense_pinned=args.condense_pinned, shear=args.shear, solver=args.solver,
                           second_order=getattr(args, "second_order", False), buckling=getattr(args, "buckling", 0),
                           modes=getattr(args, "modes", 0), mass=tuple(getattr(args, "mass", None) or ()))


def _add_stability_options(p) -> None:
    g = p.add_argument_group("beyond first order (members are subdivided internally; results per IFC member)")
    g.add_argument("--second-order", action="store_true",
                   help="every load case and combination to second order (P-Delta and P-delta), each combination "
                        "as its own load set; stops with exit 3 where a load set reaches its critical load")
    g.add_argument("--buckling", type=_count, default=0, metavar="N",
                   help="the N lowest elastic critical load factors of each combination (of each load case "
                        "where there are none), with their shapes")
    g.add_argument("--modes", type=_count, default=0, metavar="N",
                   help="the N lowest natural modes (members' own mass plus --mass)")
    g.add_argument("--mass", type=_mass_case, action="append", default=[], metavar="CASE[=FACTOR]",
                   help="add a load case's gravity loads / g, times FACTOR (default 1), as mass for --modes "
                        "(repeatable; its self-weight is not counted twice)")


def _count(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"must be at least 1, got {value}")
    return value


def _mass_case(text: str) -> tuple[str, float]:
    name, factor = text, 1.0
    if "=" in text:
        head, tail = text.rsplit("=", 1)
        try:
            factor = float(tail)
        except ValueError:
            raise argparse.ArgumentTypeError(f"{text!r}: the factor after '=' is not a number") from None
        name = head
        if not (math.isfinite(factor) and factor >= 0):
            raise argparse.ArgumentTypeError(f"{text!r}: the factor must be a number >= 0")
    if not name:
        raise argparse.ArgumentTypeError(f"{text!r}: no load case name")
    return name, factor


def _check_input(path: str) -> None:
    from .errors import AnalysisError
    from .ifc.source import check_regular

    check_regular(path)  # exists, and is a regular file (a pipe or device is refused, never opened)
    if not os.access(path, os.R_OK):
        raise AnalysisError(f"{path}: cannot be read (permission denied)")


def _check_output(path: str, input_path: str, what: str, allow_input: bool = False) -> None:
    from .errors import AnalysisError

    from .fileio import is_special_file

    folder = os.path.dirname(os.path.abspath(path))
    if os.path.isdir(path):
        raise AnalysisError(f"{path}: the {what} path is a folder")
    if is_special_file(path):  # a device or pipe: written as a stream, never replaced
        if not os.access(path, os.W_OK):
            raise AnalysisError(f"{path}: the {what} is a device or pipe that is not writable")
        return
    if not os.path.isdir(folder):
        raise AnalysisError(f"{path}: the folder {folder} for the {what} does not exist")
    if not os.access(folder, os.W_OK):
        raise AnalysisError(f"{path}: the folder {folder} for the {what} is not writable")
    if os.path.exists(path) and not os.access(path, os.W_OK):
        raise AnalysisError(f"{path}: the {what} exists and is not writable")
    same = bool(input_path) and (os.path.abspath(path) == os.path.abspath(input_path) or (
        os.path.exists(path) and os.path.exists(input_path) and os.path.samefile(path, input_path)))
    if same and not allow_input:
        raise AnalysisError(f"{path}: the {what} would overwrite the input file; choose another name "
                            "(or pass --overwrite-input for the IFC output)")


def _read(args, con):
    from . import warm_imports
    from .ifc.reader import read_ifc

    _check_input(args.input)
    con.progress("reading")
    t0 = time.perf_counter()
    if getattr(args, "keep", None) is None:  # (batch runs share a process: their modules stay imported)
        warm_imports.expect(warm_imports.CHECK_MODULES if args.command == "check" else warm_imports.ANALYZE_MODULES)
    try:
        model = read_ifc(args.input, model=args.model, merge_tolerance=args.merge_tolerance,
                         select=args.select, exclude=args.exclude, supports=args.supports, strict=args.strict,
                         members=args.members, materials=args.materials, sections=args.sections,
                         progress=con.progress)
    finally:
        warm_imports.expect(())  # a file that failed before parsing leaves nothing for the next
    con.info(f"read {args.input} in {time.perf_counter() - t0:.2f} s "
             f"(route {getattr(model, 'route', '?')}, schema {getattr(model, 'schema', '?')})")
    return model


def _indeterminacy(frame, options, con):
    try:
        from .indeterminacy import indeterminacy
    except ImportError:  # pragma: no cover - the module is part of the package
        con.warn("the indeterminacy module is not available; counts are skipped")
        return None
    con.progress("counting")
    return indeterminacy(frame, options)


def _ind_dict(ind, joints: bool = True) -> dict | None:
    if ind is None:
        return None
    return ind.to_dict(joints=joints) if hasattr(ind, "to_dict") else dict(ind)


def _mechanism_texts(frame, options) -> tuple[str, ...]:
    """Plain-language mechanisms from the solver (it describes the zero-stiffness modes)."""
    from .errors import UnstableStructureError
    from .stiffness.analyze import analyze

    try:
        analyze(frame.replace(load_cases=(), combinations=()), options)
    except UnstableStructureError as exc:
        return exc.mechanisms or (str(exc),)
    return ()


def _print_unstable(con, exc, ind=None, model=None) -> None:
    if getattr(exc, "load_set", None) is not None:  # second order at or past a critical load
        con.error(f"{exc}: nothing was written")
        print("  Stiffen or brace the frame, or check the loads; `--buckling 1` lists the critical factors.",
              file=con.err)
        return
    con.error("the structure is unstable under this idealisation: nothing was written")
    texts = getattr(exc, "mechanisms", ()) or (str(exc),)
    for k, text in enumerate(texts, 1):
        print(f"  mechanism {k}: {text}", file=con.err)
    d = _ind_dict(ind)
    if d and not con.quiet:
        print(f"  counts: kinematic {d['kinematic']}, static {d['static']}, mechanisms {d['mechanisms']} "
              "(plumbframe check shows the full table)", file=con.err)
    print("  Add supports or restraints, remove end releases, or brace the frame, then check again.", file=con.err)
    if model is not None:  # the reader's warnings often name the cause (a support on a node no member touches)
        lines = _diagnostic_lines(model)
        if lines:
            print("  reader warnings:", file=con.err)
            for line in lines:
                print(line, file=con.err)


def _atomic_text(path: str, text: str) -> None:
    from .fileio import atomic_text

    atomic_text(path, text)


def _write_json(path: str, doc: dict) -> None:
    """The document as compact UTF-8 JSON (numpy arrays allowed; NaN/infinity -> null), atomically."""
    from .fileio import atomic_write
    from .jsonio import dumps

    data = dumps(doc)

    def write(tmp: str) -> None:
        with open(tmp, "wb") as fh:
            fh.write(data)

    atomic_write(path, write, suffix=".json")


def check_document(frame, ind: dict | None, options=None) -> dict:
    """The ``plumbframe.results/1`` document without cases (for ``check --json``)."""
    from .model import member_lengths
    from .results import SCHEMA, member_properties

    lengths: FloatArray | list[float] = member_lengths(frame) if frame.n_members else []
    dof = (ind or {}).get("terms", {}).get("dof_per_joint")
    dimension = 2 if dof == 3 else 3
    doc = {
        "schema": SCHEMA,
        "units": {"length": "m", "force": "N", "moment": "N*m", "angle": "rad"},
        "dimension": dimension,
        "nodes": {nid: {"xyz": [float(v) for v in frame.nodes[i]], "source": frame.node_sources[i]}
                  for i, nid in enumerate(frame.node_ids)},
        "members": {mid: {"nodes": [frame.node_ids[frame.members[k, 0]], frame.node_ids[frame.members[k, 1]]],
                          "length": float(lengths[k]), "source": frame.member_sources[k],
                          **member_properties(frame, k)}
                    for k, mid in enumerate(frame.member_ids)},
    }
    if ind is not None:
        doc["indeterminacy"] = ind
    return doc


def _diagnostic_lines(model, results=None, limit: int = 6) -> list[str]:
    from .errors import Diagnostic

    diags = list(getattr(model, "diagnostics", None) or ())
    if results is not None:
        diags += list(results.diagnostics)
    known = {d.message for d in diags}
    diags += [Diagnostic("warning", None, text) for text in _LOGGED if text not in known]
    warnings = [d for d in diags if getattr(d, "level", "warning") in ("warning", "error")]
    lines = [f"  {d.level}: {d.message}" for d in warnings[:limit]]
    if len(warnings) > limit:
        lines.append(f"  ... and {len(warnings) - limit} more (all of them in the report)")
    return lines


# --------------------------------------------------------------------------- summary table
def _fmt(v: float, unit: str) -> str:
    if unit == "kN":
        return f"{v / 1e3:10.2f} kN  "
    if unit == "kN*m":
        return f"{v / 1e3:10.2f} kN*m"
    if unit == "mm":
        return f"{v * 1e3:10.2f} mm"
    if unit == "mrad":
        return f"{v * 1e3:10.3f} mrad"
    return f"{v:10.3g} {unit}"


def governing(results) -> dict[str, tuple[float, str, str]]:
    """Per action N, Vy, Vz, T, My, Mz: (signed value of largest magnitude, member id, case name).

    Ties go to the first member in the frame's order, then the first case.
    """
    import numpy as np

    from .model import ACTION_NAMES

    best: dict[str, tuple[float, str, str]] = {}
    ids = results.frame.member_ids
    for name in results.cases if ids else ():
        blk = results.diagram_block(name)
        sizes = blk.sizes
        F = blk.forces if sizes.sum() else np.zeros((1, len(ACTION_NAMES)))
        owner = np.repeat(np.arange(len(ids)), sizes) if sizes.sum() else np.zeros(1, int)
        for a, action in enumerate(ACTION_NAMES):
            j = int(np.abs(F[:, a]).argmax())
            v = float(F[j, a])
            if action not in best or abs(v) > abs(best[action][0]):
                best[action] = (v, ids[int(owner[j])], name)
    return best


def largest_displacement(results) -> tuple[float, str, str, float, str, str]:
    """(translation m, node, case, rotation rad, node, case): largest magnitudes over all cases."""
    import numpy as np

    t = (0.0, "", "")
    r = (0.0, "", "")
    ids = results.frame.node_ids
    for name, cr in results.cases.items():
        d = cr.displacements
        if not len(d):
            continue
        tn = np.linalg.norm(d[:, :3], axis=1)
        rn = np.linalg.norm(d[:, 3:], axis=1)
        i, j = int(tn.argmax()), int(rn.argmax())
        if tn[i] > t[0]:
            t = (float(tn[i]), ids[i], name)
        if rn[j] > r[0]:
            r = (float(rn[j]), ids[j], name)
    return (*t, *r)


def summary_table(model, results=None, ind=None, outputs: Sequence[tuple[str, str]] = ()) -> str:
    """The one-screen summary printed after each run."""
    frame = model.frame
    ind = _ind_dict(ind)
    lines = []
    title = f"plumbframe {_version()} - {os.path.basename(getattr(model, 'path', '') or '') or frame.name or 'model'}"
    lines += [title, "=" * len(title)]
    supports = int(frame.supported.sum())
    route = getattr(model, "route", None)
    lines.append(f"  model      {frame.n_nodes} nodes, {frame.n_members} members, {supports} supports"
                 + (f"  ({'structural analysis model' if route == 'structural' else 'derived from physical elements'})"
                    if route else ""))
    left = list(getattr(model, "left_out", None) or ())
    if left:
        from collections import Counter

        from .ifc.selection import reason_kind

        kinds = Counter(reason_kind(x.reason) for x in left)
        lines.append(f"  left out   {len(left)} elements (" + ", ".join(f"{v} {k}" for k, v in sorted(kinds.items()))
                     + "; listed in the warnings; --strict makes them errors)")
    lines.append(f"  loading    {len(frame.load_cases)} load cases, {len(frame.combinations)} combinations")
    if ind is not None:
        terms = ind.get("terms", {})
        lines.append(f"  counts     kinematic {ind['kinematic']}, static {ind['static']}, mechanisms {ind['mechanisms']}"
                     f"  ({terms.get('dof_per_joint', '?')} unknowns per joint, "
                     f"{terms.get('redundant_constraints', 0)} redundant constraints)")
    if results is not None:
        from .ifc.writer import idealisation_text

        lines.append(f"  analysis   {results.n_unknowns} unknowns; {idealisation_text(results)}")
        lines += _stability_lines(results)
        if results.cases:
            gov = governing(results)
            lines.append("  governing internal forces (largest magnitude, member, case)")
            for action, (v, mid, case) in gov.items():
                unit = "kN" if action in ("N", "Vy", "Vz") else "kN*m"
                if action in ("Vy", "T", "Mz") and abs(v) == 0.0:
                    continue
                lines.append(f"    {action:<3} {_fmt(v, unit)}   {mid:<16} {case}")
            t, tn, tc, r, rn, rc = largest_displacement(results)
            if tn or rn:
                parts = [f"{_fmt(t, 'mm').strip()} at node {tn} ({tc})" if tn else "no translation",
                         f"rotation {_fmt(r, 'mrad').strip()} at node {rn} ({rc})" if rn else "no rotation"]
                lines.append("  largest displacement " + "; ".join(parts))
            else:  # an all-rigid determinate truss, say: the supports and rigid members hold every joint
                lines.append("  largest displacement none: no joint moves under any case")
            worst = max((cr.equilibrium_residual for cr in results.cases.values()
                         if math.isfinite(cr.equilibrium_residual)), default=0.0)
            ok = "ok" if worst < 1e-6 else "CHECK"
            lines.append(f"  equilibrium  largest residual {worst:.1e} (relative)  {ok}")
    diag = _diagnostic_lines(model, results)
    count = len(_diagnostic_lines(model, results, limit=sys.maxsize))  # one line per warning without a limit
    lines.append(f"  warnings   {count if count else 'none'}")
    lines += diag
    notes = list(getattr(model, "notes", None) or ())
    if notes:
        lines.append(f"  reader notes: {len(notes)} (defaults and derivations; listed in the report)")
    for what, path in outputs:
        lines.append(f"  wrote      {what}: {path}")
    lines.append("")
    lines.append(CAUTION)
    return "\n".join(lines)


def _stability_lines(results) -> list[str]:
    """Summary lines of the analyses beyond first order."""
    lines = []
    if getattr(results, "theory", "first-order") == "second-order":
        lines.append("  theory     second order (P-Delta and P-delta); combinations analysed as their own load sets")
    for name, modes in (getattr(results, "buckling", None) or {}).items():
        factors = ", ".join(f"{m.factor:.3g}" for m in modes) or "none (no compression)"
        lines.append(f"  alpha_cr   {name}: {factors}")
    mass = getattr(results, "mass", None)
    if mass is not None:
        lines.append(f"  mass       {mass.total:.4g} kg ({', '.join(mass.sources)})")
    for k, m in enumerate(getattr(results, "modes", None) or (), 1):
        r = m.effective_mass_ratio
        lines.append(f"  mode {k:<5} {m.frequency:.4g} Hz  T = {m.period:.4g} s  mass ratios x {r[0]:.3f} "
                     f"y {r[1]:.3f} z {r[2]:.3f}")
    return lines


# --------------------------------------------------------------------------- commands
def _check(args, con) -> int:
    if args.json:
        _check_output(args.json, args.input, "JSON file")
    model = _read(args, con)
    options = _options(args, model)
    ind = _indeterminacy(model.frame, options, con)
    d = _ind_dict(ind)
    unstable = bool(d and d.get("mechanisms", 0) > 0)
    texts: tuple[str, ...] = ()
    if unstable:
        con.progress("describing mechanisms")
        texts = _mechanism_texts(model.frame, options)
    outputs = []
    if args.json:
        _write_json(args.json, check_document(model.frame, d, options))
        outputs.append(("JSON", args.json))
    if ind is not None and hasattr(ind, "format_table"):
        con.say(ind.format_table())  # the table carries the notes
        con.say("")
        if getattr(args, "by_joint", False) and hasattr(ind, "format_joint_table"):
            con.say(ind.format_joint_table())
            con.say("")
    elif d:
        for note in d.get("notes", []):
            con.say(f"  note: {note}")
    con.say(summary_table(model, None, ind, outputs))
    if unstable:
        con.error("the structure is unstable under this idealisation")
        for k, text in enumerate(texts or ("see the counts above",), 1):
            print(f"  mechanism {k}: {text}", file=con.err)
        if options.plane is None:
            from .stiffness.dofs import in_plane_problem

            if in_plane_problem(model.frame) is not None:
                print("  the frame and its loads lie in one plane: `plumbframe check --plane` counts it as a plane "
                      "frame, and `analyze` falls back to that when the only mechanisms are out of the plane",
                      file=con.err)
        return EXIT_UNSTABLE
    return EXIT_OK


def default_output(input_path: str) -> str:
    """``MODEL.results.ifc`` beside ``MODEL.ifc``."""
    root, ext = os.path.splitext(input_path)
    return f"{root}.results{ext or '.ifc'}"


def _analyze(args, con) -> int:
    from .errors import UnstableStructureError
    from .stiffness.analyze import analyze

    out = args.output or default_output(args.input)
    _check_input(args.input)
    _check_output(out, args.input, "IFC output", allow_input=args.overwrite_input)
    _checks.check_ifc_output_format(out)
    for path, what in ((args.json, "JSON file"), (args.report, "report")):
        if path:
            _check_output(path, args.input, what)
    _checks.check_distinct_outputs([("IFC output", out), ("JSON file", args.json), ("report", args.report)])
    _checks.check_solver(args.solver)
    if getattr(args, "mass", None) and not getattr(args, "modes", 0):
        from .errors import AnalysisError

        raise AnalysisError("--mass adds mass for the natural modes: give --modes N as well")
    _remove_stale([out, args.json, args.report], con)
    model = _read(args, con)
    options = _options(args, model)
    if args.json:
        _checks.check_json_memory(args.json, model.frame.n_members,
                                  len(model.frame.load_cases) + len(model.frame.combinations),
                                  getattr(options, "stations", 11), model.frame.n_nodes)
    ind = _indeterminacy(model.frame, options, con)
    _keep(args, model=model, ind=ind)
    try:
        t0 = time.perf_counter()
        size = f"{model.frame.n_members:,} members, {model.frame.n_nodes:,} nodes"
        results = analyze(model.frame, options, progress=lambda step: con.progress(f"{step} ({size})"))
        con.info(f"analysed in {time.perf_counter() - t0:.2f} s with {results.solver}")
        from .magnitudes import displacement_warnings

        # kilometre displacements (a unit mistake) or a frame barely held: first, ahead of the reader's findings
        model.diagnostics[:0] = displacement_warnings(results)
    except UnstableStructureError as exc:
        _print_unstable(con, exc, ind, model)
        return EXIT_UNSTABLE
    if results.options.plane and not options.plane:
        # the engine fell back to the frame's own plane (a mechanism only out of it): count the same way
        ind = _indeterminacy(model.frame, results.options, con)
    _keep(args, results=results, ind=ind)
    d = _ind_dict(ind, joints=False)  # the counts for the IFC and the summary; the JSON takes the joint rows too
    if d and d.get("mechanisms", 0) > 0:  # the counts see a mechanism the solver did not trip over
        _print_unstable(con, UnstableStructureError("; ".join(d.get("notes", [])) or "mechanism found by the counts"),
                        ind, model)
        return EXIT_UNSTABLE
    outputs = []
    from .fileio import output_set, side_outputs, side_outputs_possible
    from .ifc.writer import write_results

    size = f"{len(results.cases)} cases of {model.frame.n_members:,} members"
    side: list[tuple[str, Callable[[], None]]] = []
    if args.json:
        side.append(("JSON", lambda: _write_json(args.json, results.to_dict(indeterminacy=_ind_dict(ind),
                                                                             arrays=True))))
    if args.report:
        def report() -> None:
            from .report import write_report

            write_report(args.report, model, results, ind)

        side.append(("report", report))
    fork = None if model.frame.n_members >= SIDE_OUTPUTS_FROM else False
    if fork is None and side and side_outputs_possible():
        results.warm_diagrams()  # once, before the processes part, rather than once in each

    def started(what: str, forked: bool) -> None:
        con.progress(f"writing {'the report' if what == 'report' else what}{' alongside the IFC' if forked else ''}: "
                     f"{size}")

    def written(what: str, seconds: float, forked: bool) -> None:
        if forked:
            con.info(f"{what} written in {seconds:.2f} s alongside the IFC")

    with output_set() as staged:  # all outputs or none: each is staged, then all are moved into place
        with side_outputs(side, fork=fork, started=started, done=written):
            con.progress("writing the IFC")
            write_results(args.input, out, model, results, d, overwrite=args.overwrite_input,
                          progress=con.progress, stations=getattr(args, "stations", "extremes"), fork=fork)
        outputs.append(("IFC", out))
        outputs += [(what, args.json if what == "JSON" else args.report) for what, _ in side]
        con.written = staged.commit()
    con.say(summary_table(model, results, d, outputs))  # the counts as a document: made once (d)
    return EXIT_OK


#: from this many members the JSON and the report are written in processes of their own while this one
#: writes the IFC (`analysis.fileio.side_outputs`), and the IFC's curve reactions are formatted in another
#: while this one makes the property sets; smaller runs do it all in turn
SIDE_OUTPUTS_FROM = 2000


def _keep(args, **values) -> None:
    """Hand the run's objects to a caller that asked for them in ``args.keep`` (``batch`` builds its rows)."""
    keep = getattr(args, "keep", None)
    if keep is not None:
        keep.update(values)


def _remove_stale(paths, con) -> None:
    """Remove temporaries that a killed earlier run left beside the outputs, and say so."""
    from .fileio import remove_stale_temporaries

    folders = [os.path.dirname(os.path.abspath(p)) for p in paths if p]
    removed = remove_stale_temporaries(folders)
    if removed:
        con.warn(f"removed {len(removed)} temporary file(s) left by an interrupted earlier run: "
                 + ", ".join(removed[:5]) + (" ..." if len(removed) > 5 else ""))


def _sample(args, con) -> int:
    from .errors import AnalysisError
    from .samples import available_samples, write_sample

    if args.list or not args.name:
        names = available_samples()
        if not args.list:
            con.error("name a sample (one of: " + ", ".join(names) + ")")
            return EXIT_BAD_INPUT
        for n in names:
            print(n, file=con.out)
        return EXIT_OK
    if not args.output:
        raise AnalysisError("sample: -o FILE.ifc is required")
    _check_output(args.output, "", "sample")
    path = write_sample(args.name, args.output)
    con.say(f"wrote sample {args.name!r} to {path}")
    return EXIT_OK


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
