"""``plumbframe batch``: many models analysed at once, on Dask or one after another.

One task per model (and per variant of its options): read, check, analyse
and write the results IFC, the results JSON and the report, exactly as
``plumbframe analyze`` does (the task runs the same code path,
``cli._run``), then hand back a summary row and the output files' bytes.
The command writes each model's outputs into ``DIR/<model>/`` (one atomic
``os.replace`` per file; the row file ``batch-row.json`` last), then
``summary.csv``, ``summary.json`` and ``index.html`` into ``DIR``.

Where the tasks run:

* a ``dask.distributed`` ``LocalCluster`` of N worker processes that the
  command starts and stops (default: the cores of this machine, at most one
  per model), one thread each;
* the Dask cluster at ``--scheduler ADDRESS``: the workers read the inputs
  by their absolute paths (so they need a file system they share with this
  machine) and send the outputs back, so ``DIR`` need only exist here;
* ``--serial``, or where Dask is not installed (``pip install
  'plumbframe[batch]'``): one after another in this process.

Workers write into a private temporary folder and return the bytes, so a
worker that dies mid-task (Dask runs the task again elsewhere) leaves
nothing in ``DIR``.

Exit code: 0 when every model analysed; otherwise the most serious outcome
among the rows, in the order 1 internal error (a bug, or a worker that died
every time it ran the model), 2 bad input, 3 unstable. Bad input outranks
unstable because a file that could not be read has not been checked at all.

A model whose input bytes (SHA-256) and options (every analysis option, the
contents of option files such as a material map, the variant and the
plumbframe version) match its ``batch-row.json`` is not run again: its row
says "up to date". ``--force`` runs everything.

This module and ``cli`` are the only ones of the engine that talk to the user.
"""
from __future__ import annotations

import argparse
import csv
import datetime as _dt
import glob
import hashlib
import io
import json
import logging
import os
import re
import shutil
import socket
import sys
import tempfile
import threading
import time
from dataclasses import dataclass, field
from typing import Any, Callable, Iterable, Sequence

from .jsonio import plain as finite_json  # NaN and infinity become null, as in the results JSON

__all__ = [
    "add_batch_parser",
    "batch",
    "run_model",
    "ModelTask",
    "plan_tasks",
    "load_variants",
    "expand_inputs",
    "ROW_FIELDS",
    "STATUS_BY_EXIT",
    "batch_exit_code",
    "ROW_FILE",
]

log = logging.getLogger(__name__)

#: the per-model record written last into ``DIR/<model>/``; it decides "up to date"
ROW_FILE = "batch-row.json"
SUMMARY_SCHEMA = "plumbframe.batch/1"
#: Dask event topic on which a worker says that it has started a model (the progress bar's "running")
_TOPIC = "plumbframe-batch"

STATUS_BY_EXIT = {0: "analysed", 3: "unstable", 2: "bad input", 1: "internal error", 130: "interrupted"}
#: exit code of the batch: the first of these found among the rows (0 when none)
_EXIT_PRECEDENCE = (1, 2, 3)

#: one summary row: (key, unit or "") in column order
ROW_FIELDS: tuple[tuple[str, str], ...] = (
    ("model", ""), ("variant", ""), ("file", ""), ("sha256", ""), ("status", ""), ("exit", ""),
    ("message", ""), ("run", ""), ("nodes", ""), ("members", ""), ("kinematic", ""), ("static", ""),
    ("mechanisms", ""), ("max_displacement", "m"), ("max_displacement_node", ""), ("max_displacement_case", ""),
    ("N", "N"), ("N_member", ""), ("N_case", ""),
    ("V", "N"), ("V_component", ""), ("V_member", ""), ("V_case", ""),
    ("M", "N*m"), ("M_component", ""), ("M_member", ""), ("M_case", ""),
    ("seconds", "s"), ("cpu_seconds", "s"), ("peak_memory", "MB"), ("worker", ""), ("folder", ""), ("report", ""),
    ("results_ifc", ""), ("results_json", ""), ("options_hash", ""),
)
_ROW_KEYS = tuple(k for k, _ in ROW_FIELDS)

#: analyze options that name the outputs of one run: the batch sets them per model
_OWN_OUTPUTS = ("input", "output", "json", "report", "overwrite_input")
#: options of the console, not of the analysis
_CONSOLE = ("quiet", "verbose", "help")

_EPILOG = """\
examples:
  plumbframe batch sample_models/*.ifc --out runs/
  plumbframe batch models/ --out runs/ --workers 4 --plane
  plumbframe batch "revisions/**/*.ifc" --out runs/ --scheduler tcp://10.0.0.5:8786
  plumbframe batch office.ifc --out runs/ --variants variants.toml --force

a variants file holds one table per named option set; keys are the analyze
options without the leading dashes, e.g.:
  [variants.as-drawn]
  [variants.rigid-floors]
  inextensible = true
  merge-tolerance = 0.02

outputs: DIR/<model>/ (DIR/<model>/<variant>/ with --variants) holds
<model>.results.ifc, <model>.results.json, <model>.report.html and batch-row.json;
DIR holds summary.csv, summary.json and index.html.

exit codes: 0 every model analysed; 1 an internal error in some model; else 2
some model is bad input; else 3 some model is unstable (precedence 1, 2, 3)
"""


# --------------------------------------------------------------------------- parser
def add_batch_parser(sub, analyze: argparse.ArgumentParser) -> argparse.ArgumentParser:
    """Add the ``batch`` subcommand; it takes every option of ``analyze`` except its input and outputs.

    The options are shared with the ``analyze`` parser (the same action objects, as
    argparse's ``parents=`` does), so an option added to ``analyze`` is a batch option too.
    """
    p = sub.add_parser(
        "batch", formatter_class=argparse.RawDescriptionHelpFormatter, epilog=_EPILOG,
        help="analyse many models at once (Dask)",
        description="Analyse many IFC models, one task per model (and per variant), on a local Dask cluster, "
                    "an existing one, or one after another; write every model's outputs into DIR/<model>/ and "
                    "a summary (summary.csv, summary.json, index.html) into DIR.")
    p.add_argument("inputs", nargs="+", metavar="MODEL.ifc|DIR|GLOB",
                   help="IFC files, folders (their *.ifc files, *.results.ifc left out) or glob patterns "
                        "(** for subfolders)")
    p.add_argument("--out", required=True, metavar="DIR", help="folder for the outputs and the summary")
    g = p.add_argument_group("where the models run")
    w = g.add_mutually_exclusive_group()
    w.add_argument("--workers", type=int, metavar="N",
                   help="worker processes of the local Dask cluster (default: the cores, at most one per model)")
    w.add_argument("--scheduler", metavar="ADDRESS",
                   help="run on the existing Dask cluster at ADDRESS (tcp://host:8786); its workers must see "
                        "the input files at the same absolute paths")
    w.add_argument("--serial", action="store_true", help="one model after another in this process (no Dask)")
    g = p.add_argument_group("what runs")
    g.add_argument("--force", action="store_true", help="run every model again, also those up to date")
    g.add_argument("--variants", metavar="FILE.toml",
                   help="named option sets applied to every model, each variant its own row")
    dests = _share_options(analyze, p)
    p.set_defaults(batch_options=tuple(dests))
    return p


def _share_options(src: argparse.ArgumentParser, dst: argparse.ArgumentParser) -> list[str]:
    """Add ``src``'s option actions (groups and mutually exclusive groups kept) to ``dst``.

    Mirrors ``argparse.ArgumentParser._add_container_actions`` (what ``parents=`` uses),
    leaving out the positional input, the output options and ``-h``; an option whose
    name ``dst`` already has is left out with a log line rather than breaking the command.
    Returns the destinations of the analysis options (not the console's).
    """
    group_map: dict[Any, Any] = {}
    titles = {g.title: g for g in dst._action_groups}
    for group in src._action_groups:
        if group is src._positionals:
            continue
        if group is src._optionals:
            group_map[group] = dst._optionals
        else:
            group_map[group] = titles.get(group.title) or dst.add_argument_group(group.title, group.description)
    for mutex in src._mutually_exclusive_groups:
        container = group_map.get(mutex._container, dst)
        new = container.add_mutually_exclusive_group(required=mutex.required)
        for action in mutex._group_actions:
            group_map[action] = new
    for group in src._action_groups:
        for action in group._group_actions:
            group_map.setdefault(action, group_map.get(group, dst))
    dests = []
    taken = set(dst._option_string_actions)
    for action in src._actions:
        if action.dest in _OWN_OUTPUTS or action.dest == "help" or not action.option_strings:
            continue
        if taken.intersection(action.option_strings):
            log.info("batch: %s is a batch option of its own; the analyze option is not shared",
                     "/".join(action.option_strings))
            continue
        group_map.get(action, dst)._add_action(action)
        if action.dest not in _CONSOLE:
            dests.append(action.dest)
    return dests


def _analyze_parser() -> argparse.ArgumentParser:
    from .cli import build_parser

    parser = build_parser()
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            return action.choices["analyze"]
    raise RuntimeError("the plumbframe parser has no analyze command")  # pragma: no cover


# --------------------------------------------------------------------------- planning
@dataclass(frozen=True)
class ModelTask:
    """One model under one option set: everything a worker needs (picklable, paths absolute)."""

    key: str            # unique in the batch; also the output folder under DIR (POSIX, relative)
    model: str          # the model's name in the summary (its file name without .ifc, made unique)
    variant: str        # "" without --variants
    file: str           # the input as the summary shows it
    path: str           # absolute input path
    stem: str           # output file names: <stem>.results.ifc, ...
    options: dict = field(default_factory=dict)  # analyze option destinations -> values
    options_hash: str = ""
    size: int = 0
    error: str = ""     # set when the input cannot be a task at all (no such file, pattern matches nothing)


def expand_inputs(items: Sequence[str], out_dir: str | os.PathLike[str] | None = None) -> list[tuple[str, str]]:
    """Files named by ``items`` (files, folders, glob patterns) as ``(shown path, error)`` pairs.

    A folder gives its ``*.ifc`` files except ``*.results.ifc`` (plumbframe's own outputs);
    a pattern is expanded here (``**`` reaches into subfolders) when the shell did not.
    The same file named twice is kept once; files under ``out_dir`` are left out.
    ``error`` is "" for a file, or says why the item gives no file.
    """
    out_real = os.path.realpath(out_dir) if out_dir else None
    seen: set[str] = set()
    found: list[tuple[str, str]] = []

    def add(path: str) -> None:
        real = os.path.realpath(path)
        if real in seen:
            return
        if out_real and (real + os.sep).startswith(out_real + os.sep):
            log.info("%s is inside the output folder: left out", path)
            return
        seen.add(real)
        found.append((path, ""))

    for item in items:
        if os.path.isdir(item):
            names = sorted(p for p in glob.glob(os.path.join(glob.escape(item), "*"))
                           if p.lower().endswith(".ifc") and not p.lower().endswith(".results.ifc")
                           and os.path.isfile(p))
            if not names:
                found.append((item, f"{item}: the folder holds no .ifc file"))
            for p in names:
                add(p)
        elif os.path.exists(item):
            add(item)
        elif glob.has_magic(item):
            names = sorted(p for p in glob.glob(item, recursive=True) if os.path.isfile(p))
            if not names:
                found.append((item, f"{item}: the pattern matches no file"))
            for p in names:
                add(p)
        else:
            found.append((item, f"{item}: no such file"))
    return found


_VARIANT_NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9_.+-]*$")


def load_variants(path: str | os.PathLike[str]) -> list[tuple[str, dict[str, Any]]]:
    """The named option sets of a variants file: ``[(name, {option: value})]`` in file order.

    The file holds one table per variant under ``variants`` (``[variants.<name>]``);
    keys are analyze options without the dashes (``merge-tolerance`` or ``merge_tolerance``).

    Raises
    ------
    AnalysisError
        The file cannot be read, is not TOML, holds no variant, or a name is not usable as a folder.
    """
    import tomllib

    from .errors import AnalysisError

    path = os.fspath(path)
    try:
        with open(path, "rb") as fh:
            doc = tomllib.load(fh)
    except FileNotFoundError:
        raise AnalysisError(f"{path}: no such variants file") from None
    except OSError as exc:
        raise AnalysisError(f"{path}: cannot be read ({exc.strerror or exc})") from None
    except tomllib.TOMLDecodeError as exc:
        raise AnalysisError(f"{path}: not a TOML file ({exc})") from None
    table = doc.get("variants")
    extra = sorted(set(doc) - {"variants"})
    if extra:
        raise AnalysisError(f"{path}: unknown top-level key(s) {', '.join(extra)}; put each option set "
                            "in a [variants.<name>] table")
    if not isinstance(table, dict) or not table:
        raise AnalysisError(f"{path}: no [variants.<name>] table")
    out = []
    for name, opts in table.items():
        if not _VARIANT_NAME.match(name):
            raise AnalysisError(f"{path}: variant name {name!r} must be letters, digits, '_', '.', '+' or '-' "
                                "(it names a folder)")
        if not isinstance(opts, dict):
            raise AnalysisError(f"{path}: variant {name!r} must be a table of options, not {opts!r}")
        out.append((name, dict(opts)))
    return out


def _apply_variant(parser: argparse.ArgumentParser, options: dict[str, Any], variant: str,
                   settings: dict[str, Any], source: str) -> dict[str, Any]:
    """``options`` with a variant's settings applied, each checked as the analyze parser checks it."""
    from .errors import AnalysisError

    by_dest = {a.dest: a for a in parser._actions if a.option_strings and a.dest in options}
    out = dict(options)
    for key, value in settings.items():
        dest = key.lstrip("-").replace("-", "_")
        action = by_dest.get(dest)
        where = f"{source}: variant {variant!r}, option {key!r}"
        if action is None:
            raise AnalysisError(f"{where}: not an analyze option (known: "
                                f"{', '.join(sorted(d.replace('_', '-') for d in by_dest))})")
        try:
            out[dest] = _option_value(parser, action, value, os.path.dirname(os.path.abspath(source)))
        except (argparse.ArgumentError, TypeError, ValueError) as exc:
            raise AnalysisError(f"{where}: {exc}") from None
        if out[dest] not in (False, None):
            for mutex in parser._mutually_exclusive_groups:
                if action in mutex._group_actions:
                    for other in mutex._group_actions:
                        if other is not action:
                            out[other.dest] = other.default
    return out


def _option_value(parser: argparse.ArgumentParser, action: argparse.Action, value: Any, base: str) -> Any:
    if isinstance(action, (argparse._StoreTrueAction, argparse._StoreFalseAction, argparse._StoreConstAction)):
        if not isinstance(value, bool):
            raise TypeError(f"expected true or false, not {value!r}")
        if isinstance(action, argparse._StoreFalseAction):
            return not value
        return action.const if value else action.default
    if isinstance(action, argparse._CountAction):
        if isinstance(value, bool) or not isinstance(value, int) or value < 0:
            raise TypeError(f"expected a count (0, 1, 2, ...), not {value!r}")
        return value
    if value is False or value is None:
        return action.default

    def one(v: Any) -> Any:
        if isinstance(v, (dict, list)):
            raise TypeError(f"expected a single value, not {v!r}")
        text = str(v).lower() if isinstance(v, bool) else str(v)
        if _names_file(action) and not os.path.isabs(text):
            text = os.path.join(base, text)  # relative to the variants file
        return parser._get_values(action, [text])

    if isinstance(action, (argparse._AppendAction, argparse._ExtendAction)) or action.nargs in ("*", "+"):
        items = value if isinstance(value, list) else [value]
        return [one(v) for v in items]
    return one(value)


def _names_file(action: argparse.Action) -> bool:
    """An option whose value is a file (its metavar says FILE): made absolute and its contents hashed."""
    return "FILE" in str(action.metavar or "").upper()


def _absolute_files(parser: argparse.ArgumentParser, options: dict[str, Any]) -> dict[str, Any]:
    out = dict(options)
    for action in parser._actions:
        if action.dest in out and _names_file(action) and out[action.dest]:
            v = out[action.dest]
            out[action.dest] = [os.path.abspath(x) for x in v] if isinstance(v, list) else os.path.abspath(v)
    return out


def _file_digest(path: str, chunk: int = 1 << 20) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        while True:
            b = fh.read(chunk)
            if not b:
                break
            h.update(b)
    return h.hexdigest()


def _options_hash(parser: argparse.ArgumentParser, options: dict[str, Any], variant: str) -> str:
    """Digest of everything that decides a model's results apart from its own bytes."""
    from . import __version__

    files = {}
    for action in parser._actions:
        if action.dest in options and _names_file(action) and options[action.dest]:
            v = options[action.dest]
            for p in (v if isinstance(v, list) else [v]):
                files[p] = _file_digest(p) if os.path.isfile(p) else "missing"
    doc = {"plumbframe": __version__, "variant": variant, "files": files,
           "options": {k: options[k] for k in sorted(options)}}
    return hashlib.sha256(json.dumps(doc, sort_keys=True, default=str).encode()).hexdigest()[:20]


def _stem(path: str) -> str:
    base = os.path.basename(path)
    return base[:-4] if base.lower().endswith(".ifc") else (os.path.splitext(base)[0] or base)


def _safe(name: str) -> str:
    return re.sub(r"[^A-Za-z0-9_.+-]+", "_", name).strip(".") or "model"


def plan_tasks(args: argparse.Namespace, out_dir: str) -> list[ModelTask]:
    """One task per input file and variant, in the order the inputs were given."""
    parser = _analyze_parser()
    base = {d: getattr(args, d) for d in getattr(args, "batch_options", ()) if hasattr(args, d)}
    base = _absolute_files(parser, base)
    variants: list[tuple[str, dict[str, Any]]] = [("", {})]
    if getattr(args, "variants", None):
        variants = load_variants(args.variants)
    option_sets = [(name, _apply_variant(parser, base, name, settings, args.variants) if name else base)
                   for name, settings in variants]
    hashes = {name: _options_hash(parser, opts, name) for name, opts in option_sets}

    files = expand_inputs(args.inputs, out_dir)
    stems = [_safe(_stem(p)) for p, _ in files]
    clash = {s for s in stems if stems.count(s) > 1}
    tasks = []
    for (shown, error), stem in zip(files, stems):
        model = stem
        if stem in clash:  # two inputs with one name: tell them apart by their path, the same on every run
            model = f"{stem}-{hashlib.sha1(os.path.abspath(shown).encode()).hexdigest()[:6]}"
        path = os.path.abspath(shown)
        size = os.path.getsize(path) if not error and os.path.isfile(path) else 0
        for name, opts in option_sets:
            key = f"{model}/{name}" if name else model
            tasks.append(ModelTask(key=key, model=model, variant=name, file=shown, path=path,
                                   stem=_stem(path) if not error else model, options=opts,
                                   options_hash=hashes[name], size=size, error=error))
    return tasks


# --------------------------------------------------------------------------- one model (runs on a worker)
#: one model at a time per process: the report's plots use pyplot (not thread-safe) and the peak
#: memory of a task is that of its process
_ONE_AT_A_TIME = threading.Lock()


def _reset_peak_memory() -> bool:
    try:  # Linux: "5" resets the peak resident set size (VmHWM) of this process
        with open("/proc/self/clear_refs", "w") as fh:
            fh.write("5")
        return True
    except OSError:
        return False


def _peak_memory_mb() -> float:
    try:
        with open("/proc/self/status") as fh:
            for line in fh:
                if line.startswith("VmHWM:"):
                    return int(line.split()[1]) / 1024.0
    except OSError:
        pass
    try:
        import resource

        peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
        return peak / (1024.0 * 1024.0) if sys.platform == "darwin" else peak / 1024.0
    except (ImportError, OSError):  # pragma: no cover - Windows
        return float("nan")


def _say_running(key: str) -> None:
    """Tell the batch (through a Dask event) that this worker has started the model."""
    try:
        from distributed import get_worker

        worker = get_worker()
    except (ImportError, ValueError):
        return  # not on a Dask worker
    try:
        worker.log_event(_TOPIC, {"key": key, "state": "running", "worker": worker.address})
    except Exception:  # pragma: no cover - progress only
        log.debug("could not send the progress event", exc_info=True)


def _worker_name() -> str:
    try:
        from distributed import get_worker

        return get_worker().address
    except (ImportError, ValueError):
        return f"in-process {socket.gethostname()}:{os.getpid()}"


def _blank_row(task: ModelTask) -> dict[str, Any]:
    row: dict[str, Any] = {k: None for k in _ROW_KEYS}
    row.update(model=task.model, variant=task.variant, file=task.file, folder=task.key,
               options_hash=task.options_hash, run="now", message="")
    return row


def run_model(task: ModelTask, verbose: bool = False) -> dict[str, Any]:
    """Run one model as ``plumbframe analyze`` does; return ``{"row": summary row, "files": {name: bytes}}``.

    The outputs are written into a private temporary folder and returned as bytes, so
    nothing reaches the batch's folder unless the task completes. Never raises for a
    problem with the model: that is the row's status, exit code and message.
    """
    with _ONE_AT_A_TIME:
        _say_running(task.key)
        _reset_peak_memory()
        t0, c0 = time.perf_counter(), time.process_time()
        row = _blank_row(task)
        files: dict[str, bytes] = {}
        try:
            code, message = _run_in(task, row, files, verbose)
        finally:
            row["seconds"] = round(time.perf_counter() - t0, 4)
            row["cpu_seconds"] = round(time.process_time() - c0, 4)  # the whole process: far below seconds = a busy machine
            row["peak_memory"] = round(_peak_memory_mb(), 1)
            row["worker"] = _worker_name()
        row["exit"] = code
        row["status"] = STATUS_BY_EXIT.get(code, "internal error")
        row["message"] = message
        return {"row": row, "files": files}


def _run_in(task: ModelTask, row: dict[str, Any], files: dict[str, bytes], verbose: bool) -> tuple[int, str]:
    from . import cli

    if task.error:
        return cli.EXIT_BAD_INPUT, task.error
    if not os.path.isfile(task.path):
        where = socket.gethostname()
        return cli.EXIT_BAD_INPUT, (f"{task.path}: no such file on {where} (the workers of a --scheduler cluster "
                                    "must see the inputs at the same absolute paths)")
    row["sha256"] = _file_digest(task.path)
    names = {"output": f"{task.stem}.results.ifc", "json": f"{task.stem}.results.json",
             "report": f"{task.stem}.report.html"}
    tmp = tempfile.mkdtemp(prefix="plumbframe-batch-")
    try:
        args = argparse.Namespace(**task.options)
        args.command, args.input, args.overwrite_input = "analyze", task.path, False
        args.quiet, args.verbose = True, verbose
        for dest, name in names.items():
            setattr(args, dest, os.path.join(tmp, name))
        keep: dict[str, Any] = {}
        args.keep = keep
        err = io.StringIO()
        con = cli._Console(quiet=True, verbose=False, out=io.StringIO(), err=err)
        restore = cli._setup_logging(False, True)
        try:
            code = cli._run(args, con)
        finally:
            restore()
        _fill_row(row, keep)
        if code == cli.EXIT_OK:
            for dest, name in names.items():
                with open(getattr(args, dest), "rb") as fh:
                    files[name] = fh.read()
            row["results_ifc"], row["results_json"] = names["output"], names["json"]
            row["report"] = names["report"]
            return code, _warnings_text(keep)
        return code, _message(err.getvalue(), code)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


def _fill_row(row: dict[str, Any], keep: dict[str, Any]) -> None:
    from . import cli

    model = keep.get("model")
    if model is not None:
        row["nodes"], row["members"] = int(model.frame.n_nodes), int(model.frame.n_members)
    d = cli._ind_dict(keep.get("ind"))
    if d:
        row["kinematic"], row["static"], row["mechanisms"] = d.get("kinematic"), d.get("static"), d.get("mechanisms")
    results = keep.get("results")
    if results is None or not results.cases:
        return
    t, tn, tc, _r, _rn, _rc = cli.largest_displacement(results)
    row["max_displacement"], row["max_displacement_node"], row["max_displacement_case"] = t, tn, tc
    gov = cli.governing(results)
    for label, comps in (("N", ("N",)), ("V", ("Vy", "Vz")), ("M", ("My", "Mz"))):
        best = None
        for c in comps:
            if c in gov and (best is None or abs(gov[c][0]) > abs(gov[best][0])):
                best = c
        if best is None:
            continue
        v, mid, case = gov[best]
        row[label], row[f"{label}_member"], row[f"{label}_case"] = v, mid, case
        if label != "N":
            row[f"{label}_component"] = best


def _warnings_text(keep: dict[str, Any]) -> str:
    from . import cli

    lines = [ln.strip() for ln in cli._diagnostic_lines(keep.get("model"), keep.get("results"), limit=1)]
    return "; ".join(lines)


def _message(text: str, code: int) -> str:
    """One line from what ``analyze`` printed: the error, and for a mechanism its descriptions."""
    lines = [ln.strip() for ln in text.splitlines() if ln.strip() and not ln.startswith("warning: ")]
    if not lines:
        return STATUS_BY_EXIT.get(code, "failed")
    first = lines[0].removeprefix("plumbframe: error: ")
    if code == 3:
        mechanisms = [ln for ln in lines[1:] if ln.startswith("mechanism ")]
        return "; ".join([first] + mechanisms)
    if code == 1:
        return "; ".join([first] + [ln for ln in lines[1:] if not ln.startswith("plumbframe: error: ")][-1:])
    return first


# --------------------------------------------------------------------------- up to date
def _previous_row(out_dir: str, task: ModelTask) -> dict[str, Any] | None:
    path = os.path.join(out_dir, task.key, ROW_FILE)
    try:
        with open(path, encoding="utf-8") as fh:
            row = json.load(fh)
    except (OSError, ValueError):
        return None
    return row if isinstance(row, dict) else None


def _up_to_date(out_dir: str, task: ModelTask, previous: dict[str, Any] | None, digest: str) -> bool:
    if task.error or previous is None or not digest:
        return False
    if previous.get("sha256") != digest or previous.get("options_hash") != task.options_hash:
        return False
    if previous.get("exit") not in (0, 2, 3):  # internal errors and lost workers are tried again
        return False
    folder = os.path.join(out_dir, task.key)
    return all(os.path.isfile(os.path.join(folder, previous[k]))
               for k in ("results_ifc", "results_json", "report") if previous.get(k))


def _store(out_dir: str, task: ModelTask, outcome: dict[str, Any], previous: dict[str, Any] | None) -> dict:
    """Write one model's outputs into DIR/<key>/ (each file atomically, the row file last)."""
    from .fileio import atomic_text, atomic_write, output_set, remove_stale_temporaries

    row = dict(outcome["row"])
    if task.error:
        return row
    folder = os.path.join(out_dir, task.key)
    os.makedirs(folder, exist_ok=True)
    remove_stale_temporaries([folder])  # left by a batch that was killed while writing
    new = set(outcome["files"])
    with output_set() as staged:  # the model's files and its row: all of them or none
        for name, data in outcome["files"].items():
            def write(tmp: str, data: bytes = data) -> None:
                with open(tmp, "wb") as fh:
                    fh.write(data)

            atomic_write(os.path.join(folder, name), write, suffix=os.path.splitext(name)[1])
        atomic_text(os.path.join(folder, ROW_FILE), json.dumps(finite_json(row), indent=1) + "\n", suffix=".json")
        staged.commit()
    for k in ("results_ifc", "results_json", "report"):  # outputs of an earlier run that this one did not make
        old = (previous or {}).get(k)
        if old and old not in new and os.path.basename(old) == old:
            try:
                os.remove(os.path.join(folder, old))
            except OSError:
                pass
    return row


# --------------------------------------------------------------------------- progress
def _short(text: str, limit: int = 160) -> str:
    """A message cut for the console (the summary keeps it whole)."""
    return text if len(text) <= limit else text[: limit - 20].rstrip() + " ... (see summary)"


class _Progress:
    """One bar over the models: finished (exit 0), failed (exit != 0), running, up to date."""

    def __init__(self, con, total: int):
        self.con, self.total = con, total
        self.done = self.ok = self.failed = self.fresh = 0
        self.running: set[str] = set()
        self.lock = threading.Lock()
        self.t0 = time.perf_counter()

    def started(self, key: str) -> None:
        with self.lock:
            self.running.add(key)

    def finished(self, row: dict[str, Any]) -> None:
        with self.lock:
            self.running.discard(row.get("folder") or "")
            self.done += 1
            if row.get("run") == "up to date":
                self.fresh += 1
            if row.get("exit") == 0:
                self.ok += 1
            else:
                self.failed += 1
        if row.get("run") != "up to date" and not self.con.quiet:
            secs = f" in {row['seconds']:.1f} s" if isinstance(row.get("seconds"), float) else ""
            extra = f": {_short(row['message'])}" if row.get("exit") and row.get("message") else ""
            self.con.say(f"  [{self.done:>{len(str(self.total))}}/{self.total}] {row.get('folder') or row['file']}: "
                         f"{row['status']}{secs}{extra}")
        self.draw()

    def draw(self) -> None:
        with self.lock:
            width = 24
            filled = int(round(width * self.done / self.total)) if self.total else width
            text = (f"[{'#' * filled}{'.' * (width - filled)}] {self.done}/{self.total} models  "
                    f"running {len(self.running)}  finished {self.ok}  failed {self.failed}"
                    + (f"  up to date {self.fresh}" if self.fresh else "")
                    + f"  {time.perf_counter() - self.t0:.0f} s")
        self.con.progress(text)


# --------------------------------------------------------------------------- executors
def _serial(tasks: Sequence[ModelTask], progress: _Progress, verbose: bool, done: Callable) -> str:
    for task in tasks:
        progress.started(task.key)
        progress.draw()
        done(task, run_model(task, verbose), None)
    return "in this process, one model after another"


def _dask(tasks: Sequence[ModelTask], progress: _Progress, verbose: bool, done: Callable, *,
          scheduler: str | None, workers: int | None) -> str:
    import uuid

    from distributed import Client, LocalCluster, as_completed

    from .errors import AnalysisError

    quiet_logs = logging.ERROR if not verbose else logging.WARNING
    saved = {name: logging.getLogger(name).level for name in ("distributed", "tornado")}
    for name in saved:
        logging.getLogger(name).setLevel(quiet_logs)
    cluster = None
    try:
        if scheduler:
            try:
                client = Client(scheduler, timeout="10s")
            except (OSError, TimeoutError) as exc:
                raise AnalysisError(f"{scheduler}: no Dask scheduler answers there ({exc})") from None
            where = f"the Dask cluster at {scheduler} ({len(client.scheduler_info().get('workers', {}))} workers)"
            try:
                if "dashboard" in client.scheduler_info().get("services", {}):
                    progress.con.say(f"  Dask dashboard: {client.dashboard_link}")
            except Exception:  # pragma: no cover - the link is a convenience
                pass
        else:
            n = max(1, min(workers or _cores(), len(tasks)))
            progress.con.progress(f"starting {n} Dask worker process{'es' if n > 1 else ''}")
            try:
                # on this machine only; no dashboard, and the scheduler's small HTTP server (health, metrics) on
                # a free port rather than 8787, which another cluster may hold
                cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=True, host="127.0.0.1",
                                       dashboard_address=None, scheduler_kwargs={"dashboard_address": "127.0.0.1:0"},
                                       silence_logs=logging.CRITICAL if not verbose else logging.WARNING)
                client = Client(cluster)
            except Exception as exc:  # no ports, no process spawning, ...: the batch still runs
                if cluster is not None:
                    cluster.close()
                    cluster = None
                raise _NoLocalCluster(f"{type(exc).__name__}: {exc}") from exc
            where = f"a local Dask cluster of {n} worker process{'es' if n > 1 else ''}"
        try:
            client.subscribe_topic(_TOPIC, lambda event: progress.started(event[1].get("key", "")))
            token = uuid.uuid4().hex[:8]
            order = sorted(tasks, key=lambda t: -t.size)  # largest first: the long ones do not come last
            futures = {client.submit(run_model, t, verbose, key=f"plumbframe-{token}-{t.key}", pure=False): t
                       for t in order}
            ac = as_completed(list(futures))
            try:
                while not ac.is_empty():
                    if not ac.has_ready():
                        progress.draw()
                        time.sleep(0.1)
                        continue
                    for fut in ac.next_batch(block=False):
                        task = futures[fut]
                        try:
                            outcome = fut.result()
                        except Exception as exc:  # the task itself failed: a lost worker or a bug
                            done(task, None, exc)
                        else:
                            done(task, outcome, None)
                        fut.release()
            except BaseException:
                client.cancel(list(futures))
                raise
        finally:
            try:
                client.unsubscribe_topic(_TOPIC)
            except Exception:  # pragma: no cover
                pass
            client.close()
    finally:
        if cluster is not None:
            cluster.close()
        for name, level in saved.items():
            logging.getLogger(name).setLevel(level)
    return where


class _NoLocalCluster(RuntimeError):
    """The local Dask cluster could not be started (the batch then runs in this process)."""


def _cores() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # pragma: no cover - macOS, Windows
        return os.cpu_count() or 1


def _failed_row(task: ModelTask, exc: BaseException) -> dict[str, Any]:
    row = _blank_row(task)
    name = type(exc).__name__
    if name == "KilledWorker":
        msg = f"the worker running it died each time it was tried (out of memory, or killed): {exc}"
    elif isinstance(exc, ImportError):
        msg = (f"a Dask worker cannot import plumbframe ({exc}): install the same plumbframe version on every "
               "worker of the cluster")
    else:
        msg = f"internal error ({name}: {exc})"
    row.update(status="internal error", exit=1, message=msg)
    return row


# --------------------------------------------------------------------------- summary
def batch_exit_code(rows: Iterable[dict[str, Any]]) -> int:
    """0 when every row analysed; else the first of 1, 2, 3 that some row has."""
    codes = {r.get("exit") for r in rows}
    for code in _EXIT_PRECEDENCE:
        if code in codes:
            return code
    return 0 if codes <= {0} else 1


def _csv_text(rows: Sequence[dict[str, Any]]) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(_ROW_KEYS)
    for r in rows:
        w.writerow(["" if r.get(k) is None else (repr(r[k]) if isinstance(r[k], float) else r[k]) for k in _ROW_KEYS])
    return buf.getvalue()


def _write_summary(out_dir: str, rows: list[dict[str, Any]], meta: dict[str, Any]) -> list[str]:
    from .fileio import atomic_text
    from .report.batch_index import index_html

    doc = dict(meta)
    doc["units"] = {k: u for k, u in ROW_FIELDS if u}
    counts: dict[str, int] = {}
    for r in rows:
        counts[r["status"]] = counts.get(r["status"], 0) + 1
    counts["up to date"] = sum(1 for r in rows if r.get("run") == "up to date")
    doc["counts"] = counts
    doc["rows"] = [{k: r.get(k) for k in _ROW_KEYS} for r in rows]
    paths = [os.path.join(out_dir, n) for n in ("summary.csv", "summary.json", "index.html")]
    atomic_text(paths[0], _csv_text(rows), suffix=".csv")
    atomic_text(paths[1], json.dumps(finite_json(doc), indent=1, allow_nan=False) + "\n", suffix=".json")
    atomic_text(paths[2], index_html(doc), suffix=".html")
    return paths


# --------------------------------------------------------------------------- the command
def _lock(out_dir: str):
    """Hold ``DIR/.batch.lock`` so that two batches do not write into one folder at once."""
    from .errors import AnalysisError

    path = os.path.join(out_dir, ".batch.lock")
    fh = open(path, "a+")
    try:
        import fcntl
    except ImportError:  # pragma: no cover - Windows: no lock
        return fh
    try:
        fcntl.flock(fh.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
    except OSError:
        fh.close()
        raise AnalysisError(f"{out_dir}: another plumbframe batch is writing into this folder") from None
    return fh


def _have_dask() -> bool:
    try:
        import distributed  # noqa: F401
    except ImportError:
        return False
    return True


def batch(args: argparse.Namespace, con) -> int:
    """Run ``plumbframe batch`` (called by the CLI); returns the batch's exit code."""
    from . import __version__
    from .errors import AnalysisError

    out_dir = os.path.abspath(args.out)
    if os.path.exists(out_dir) and not os.path.isdir(out_dir):
        raise AnalysisError(f"{args.out}: the output folder is a file")
    try:
        os.makedirs(out_dir, exist_ok=True)
    except OSError as exc:
        raise AnalysisError(f"{args.out}: cannot create the output folder ({exc.strerror or exc})") from None
    if not os.access(out_dir, os.W_OK):
        raise AnalysisError(f"{args.out}: the output folder is not writable")
    if args.workers is not None and args.workers < 1:
        raise AnalysisError(f"--workers {args.workers}: give at least 1 (or --serial)")
    use_dask = not args.serial
    if use_dask and not _have_dask():
        if args.scheduler:
            raise AnalysisError("--scheduler needs Dask: pip install 'plumbframe[batch]'")
        con.warn("Dask is not installed (pip install 'plumbframe[batch]'): the models run one after another "
                 "in this process")
        use_dask = False

    lock = _lock(out_dir)
    try:
        return _batch(args, con, out_dir, use_dask, __version__)
    finally:
        lock.close()


def _batch(args, con, out_dir: str, use_dask: bool, version: str) -> int:
    t0 = time.perf_counter()
    tasks = plan_tasks(args, out_dir)
    if not tasks:
        from .errors import AnalysisError

        raise AnalysisError("no model to analyse")
    rows: dict[str, dict[str, Any]] = {}
    todo: list[ModelTask] = []
    previous = {t.key: _previous_row(out_dir, t) for t in tasks}
    progress = _Progress(con, len(tasks))
    digests: dict[str, str] = {}
    for t in tasks:
        if t.error:  # no file to run: the row is known here
            row = _blank_row(t)
            row.update(status="bad input", exit=2, message=t.error, folder=None)
            rows[t.key] = row
            progress.finished(row)
            continue
        if args.force:
            todo.append(t)
            continue
        if t.path not in digests:
            try:
                digests[t.path] = _file_digest(t.path)
            except OSError:
                digests[t.path] = ""
        prev = previous[t.key]
        if _up_to_date(out_dir, t, prev, digests[t.path]):
            assert prev is not None
            row = {k: prev.get(k) for k in _ROW_KEYS}
            row.update(run="up to date", model=t.model, variant=t.variant, file=t.file, folder=t.key)
            rows[t.key] = row
            progress.finished(row)
        else:
            todo.append(t)

    def done(task: ModelTask, outcome: dict[str, Any] | None, exc: BaseException | None) -> None:
        if outcome is None:
            row = _failed_row(task, exc or RuntimeError("no result"))
            outcome = {"row": row, "files": {}}
        try:
            rows[task.key] = _store(out_dir, task, outcome, previous[task.key])
        except Exception as err:  # the folder could not be written: the row says so
            row = dict(outcome["row"])
            row.update(status="bad input", exit=2, message=str(err))
            rows[task.key] = row
        progress.finished(rows[task.key])

    where = "nothing to run"
    stopped = 0
    try:
        if todo:
            if use_dask:
                try:
                    where = _dask(todo, progress, args.verbose, done, scheduler=args.scheduler, workers=args.workers)
                except _NoLocalCluster as exc:
                    con.warn(f"the local Dask cluster did not start ({exc}): the models run one after another "
                             "in this process")
                    where = _serial(todo, progress, args.verbose, done)
            else:
                where = _serial(todo, progress, args.verbose, done)
    except KeyboardInterrupt as exc:  # Ctrl-C, or SIGTERM (the CLI raises it as a KeyboardInterrupt subclass)
        stopped = 143 if type(exc).__name__ == "Terminated" else 130
    ordered = [rows[t.key] for t in tasks if t.key in rows]
    code = stopped or batch_exit_code(ordered)
    meta = {"schema": SUMMARY_SCHEMA, "plumbframe": version,
            "created": _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat(),
            "inputs": list(args.inputs), "ran": where, "seconds": round(time.perf_counter() - t0, 3),
            "exit_code": code, "variants": _variant_table(args),
            "exit_codes": {"0": "every model analysed", "1": "an internal error in some model",
                           "2": "some model is bad input", "3": "some model is unstable",
                           "precedence": "1, then 2, then 3"}}
    paths = _write_summary(out_dir, ordered, meta)
    _final_lines(con, ordered, len(tasks), where, time.perf_counter() - t0, paths, code)
    return code


def _variant_table(args) -> dict[str, dict[str, Any]]:
    if not getattr(args, "variants", None):
        return {}
    return {name: settings for name, settings in load_variants(args.variants)}


def _final_lines(con, rows, total, where, seconds, paths, code) -> None:
    from .cli import CAUTION

    counts: dict[str, int] = {}
    for r in rows:
        counts[r["status"]] = counts.get(r["status"], 0) + 1
    fresh = sum(1 for r in rows if r.get("run") == "up to date")
    con.say(f"plumbframe batch: {len(rows)} of {total} models in {seconds:.1f} s, {where}"
            + (f"; {fresh} up to date (--force runs them again)" if fresh else ""))
    con.say("  " + ", ".join(f"{n} {s}" for s, n in sorted(counts.items())))
    for r in rows:
        if r.get("exit"):
            con.say(f"  {r['status']:<14} {r.get('folder') or r['file']}: {_short(r.get('message') or '')}")
    for p in paths:
        con.say(f"  wrote      {p}")
    if code in (130, 143):
        con.error(f"{'interrupted' if code == 130 else 'terminated'}; the models finished so far are in the summary")
    con.say("")
    con.say(CAUTION)
