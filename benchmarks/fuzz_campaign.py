"""Fuzz campaign: many hostile inputs through ``load_capture`` and ``analyse``.

Usage (from the repository root)::

    .venv/bin/python benchmarks/fuzz_campaign.py                       # 10 000 inputs
    .venv/bin/python benchmarks/fuzz_campaign.py --count 2000 --seed 1 --jobs 2

Each input comes from ``tests/support/hostile.py`` (every generator in turn, seeds drawn from
``--seed``), is written into a temporary folder and run in a pool of worker processes, each
limited to ``--memory`` bytes of address space (``RLIMIT_AS``, default 1 GB) and ``--timeout``
seconds per input (default 5; a worker that overruns is killed and replaced). Printed, never
asserted:

* outcomes: ``ok`` (figures measured), ``refused`` by error class, ``crash`` (any other
  exception), ``timeout``, ``memory`` (a ``MemoryError`` escaping the engine, or a worker
  killed for memory), ``died`` (a worker ended by a signal);
* contract breaches, which may come on top of ``ok`` or ``refused``: the file changed, a
  headline figure not finite, a refusal that is not one line naming the file (or, for a
  setting, its field);
* the first tracebacks of each kind of crash, and the slowest inputs.

Every line names ``generator seed``; ``.venv/bin/python -m tests.support.hostile GENERATOR
SEED FOLDER`` writes that input again. Nothing is written outside the temporary folder
(Python's bytecode cache included), which is removed at the end.
"""

from __future__ import annotations

import os

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")  # one thread per worker: --jobs sets the parallelism
os.environ["PYTHONDONTWRITEBYTECODE"] = "1"

import argparse  # noqa: E402
import hashlib  # noqa: E402
import multiprocessing as mp  # noqa: E402
import resource  # noqa: E402
import shutil  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
import traceback  # noqa: E402
from collections import Counter, defaultdict  # noqa: E402
from multiprocessing.connection import wait  # noqa: E402
from pathlib import Path  # noqa: E402

sys.dont_write_bytecode = True
ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))  # a script run from anywhere: the project's test helpers

from tests.support import hostile  # noqa: E402
from trueslope.core.analysis import analyse  # noqa: E402
from trueslope.core.errors import SettingsError, TrueslopeError  # noqa: E402
from trueslope.core.io import load_capture  # noqa: E402
from trueslope.core.settings import Settings  # noqa: E402

#: Tracebacks printed per kind of crash, and slowest inputs listed.
SHOW = 3


def _digest(path: Path) -> str | None:
    try:
        return hashlib.sha256(path.read_bytes()).hexdigest()
    except OSError:
        return None


def _signature(exc: BaseException) -> str:
    """The exception type and the innermost frame inside trueslope (or the innermost at all)."""
    frames = traceback.extract_tb(exc.__traceback__)
    ours = [f for f in frames if "trueslope" in f.filename or "/core/" in f.filename]
    f = (ours or frames or [None])[-1]
    where = f"{Path(f.filename).name}:{f.lineno} {f.name}" if f else "?"
    return f"{type(exc).__name__} at {where}"


def run_one(generator: str, seed: int, folder: Path) -> dict:
    """Build one input and run it; a plain dict for the pipe back to the parent."""
    case = hostile.make_case(generator, seed, folder)
    out = {"case": case.describe(), "breaches": []}
    before = _digest(case.path)
    try:
        settings = case.options.settings()
    except SettingsError as exc:
        problem = hostile.refusal_problem(exc, case.path)
        if problem:
            out["breaches"].append(("refusal message", f"settings: {problem}"))
        settings = Settings()
    t = time.perf_counter()
    try:
        cap = load_capture(case.path, sample_interval_s=case.options.sample_interval_s)
        analysis = analyse(cap, settings)
    except TrueslopeError as exc:
        out.update(kind="refused", label=type(exc).__name__, message=str(exc))
        problem = hostile.refusal_problem(exc, case.path)
        if problem:
            out["breaches"].append(("refusal message", problem))
    except MemoryError as exc:
        out.update(kind="memory", label=_signature(exc), message=str(exc))
    except Exception as exc:  # noqa: BLE001 - the campaign counts what the engine lets out
        out.update(kind="crash", label=_signature(exc), message=f"{type(exc).__name__}: {exc}",
                   traceback=traceback.format_exc())
    else:
        out.update(kind="ok", label="", message="")
        problem = hostile.figure_problem(analysis)
        if problem:
            out["breaches"].append(("non-finite figures", problem))
    out["seconds"] = time.perf_counter() - t
    if _digest(case.path) != before:
        out["breaches"].append(("file changed", "the input's bytes changed"))
    return out


def _worker(conn, root: str, memory: int) -> None:
    resource.setrlimit(resource.RLIMIT_AS, (memory, memory))
    os.chdir(root)
    while True:
        task = conn.recv()
        if task is None:
            return
        folder = Path(tempfile.mkdtemp(dir=root))
        try:
            result = run_one(*task, folder)
        except MemoryError:
            result = {"case": f"{task[0]} seed {task[1]}", "kind": "memory",
                      "label": "MemoryError while building or checking the input",
                      "message": "", "breaches": [], "seconds": 0.0}
        finally:
            shutil.rmtree(folder, ignore_errors=True)
        conn.send(result)


class _Slot:
    """One worker process and the task it is running."""

    def __init__(self, ctx, root: str, memory: int) -> None:
        self.conn, child = ctx.Pipe()
        self.proc = ctx.Process(target=_worker, args=(child, root, memory), daemon=True)
        self.proc.start()
        child.close()
        self.task: tuple[str, int] | None = None
        self.started = 0.0

    def give(self, task: tuple[str, int]) -> None:
        self.task, self.started = task, time.perf_counter()
        self.conn.send(task)

    def stop(self, grace: float = 0.0) -> None:
        self.proc.join(grace)
        if self.proc.is_alive():
            self.proc.kill()  # this worker only, by the process object we started
        self.proc.join()
        self.conn.close()


def campaign(count: int, seed: int, jobs: int, timeout: float, memory: int, root: str):
    ctx = mp.get_context("fork" if sys.platform.startswith("linux") else "spawn")
    tasks = list(reversed(hostile.case_stream(seed, count)))
    slots = [_Slot(ctx, root, memory) for _ in range(jobs)]
    results: list[dict] = []
    t0, last = time.perf_counter(), 0.0
    try:
        while tasks or any(s.task for s in slots):
            for s in slots:
                if s.task is None and tasks:
                    s.give(tasks.pop())
            busy = [s for s in slots if s.task]
            now = time.perf_counter()
            ready = wait([s.conn for s in busy],
                         timeout=max(0.01, min(s.started + timeout for s in busy) - now))
            for i, s in enumerate(slots):
                if s.task is None:
                    continue
                name = f"{s.task[0]} seed {s.task[1]}"
                if s.conn in ready:
                    try:
                        results.append(s.conn.recv())
                        s.task = None
                        continue
                    except (EOFError, OSError):
                        s.proc.join(1)
                        code = s.proc.exitcode
                        kind = "memory" if code == -9 else "died"
                        results.append({"case": name, "kind": kind, "label": f"exit {code}",
                                        "message": "", "breaches": [], "seconds": 0.0})
                elif time.perf_counter() - s.started > timeout:
                    results.append({"case": name, "kind": "timeout", "label": "", "message": "",
                                    "breaches": [], "seconds": timeout})
                else:
                    continue
                s.stop()
                slots[i] = _Slot(ctx, root, memory)
            if time.perf_counter() - last > 30:
                last = time.perf_counter()
                print(f"  {len(results)}/{count} in {last - t0:.0f} s", file=sys.stderr, flush=True)
    finally:
        for s in slots:
            if s.proc.is_alive() and s.task is None:
                s.conn.send(None)
                s.stop(grace=2.0)
            else:
                s.stop()
    return results, time.perf_counter() - t0


def report(results: list[dict], seconds: float, args) -> None:
    kinds = Counter(r["kind"] for r in results)
    print(f"fuzz campaign: {len(results)} inputs, seed {args.seed}, {args.jobs} jobs, "
          f"{args.timeout:g} s and {args.memory / 2**30:g} GiB per input, {seconds:.0f} s")
    print("\noutcomes")
    for kind in ("ok", "refused", "crash", "timeout", "memory", "died"):
        print(f"  {kind:8s} {kinds.get(kind, 0)}")
    for kind in ("refused", "crash", "memory", "died"):
        by = Counter(r["label"] for r in results if r["kind"] == kind)
        if by:
            print(f"\n{kind} by {'error class' if kind == 'refused' else 'kind'}")
            for label, n in by.most_common():
                first = next(r["case"] for r in results if r["kind"] == kind and r["label"] == label)
                print(f"  {n:6d}  {label}   (first: {first})")
    timeouts = [r["case"] for r in results if r["kind"] == "timeout"]
    if timeouts:
        print(f"\ntimeouts: " + "; ".join(timeouts[:10]) + (" ..." if len(timeouts) > 10 else ""))
    breaches: dict[str, list] = defaultdict(list)
    for r in results:
        for what, detail in r["breaches"]:
            breaches[what].append((r["case"], detail))
    print("\ncontract breaches")
    for what in ("file changed", "non-finite figures", "refusal message"):
        found = breaches.get(what, [])
        print(f"  {what:20s} {len(found)}")
        for case, detail in found[:SHOW]:
            print(f"      {case}: {detail[:300]}")
    crashes: dict[str, list] = defaultdict(list)
    for r in results:
        if r["kind"] == "crash":
            crashes[r["label"]].append(r)
    if crashes:
        print("\nfirst tracebacks of each kind of crash")
    for label, rs in crashes.items():
        print(f"\n--- {label} ({len(rs)}x); {rs[0]['case']}")
        print(rs[0]["traceback"].rstrip())
        for r in rs[1:SHOW]:
            print(f"    also: {r['case']}: {r['message'][:200]}")
    print("\nslowest inputs")
    for r in sorted(results, key=lambda r: -r["seconds"])[:10]:
        print(f"  {r['seconds']:6.2f} s  {r['kind']:8s} {r['case'][:150]}")


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--count", type=int, default=10_000, help="inputs to run (default 10000)")
    p.add_argument("--seed", type=int, default=0, help="seed of the whole campaign")
    p.add_argument("--jobs", type=int, default=os.cpu_count() or 1, help="worker processes")
    p.add_argument("--timeout", type=float, default=5.0, help="seconds per input")
    p.add_argument("--memory", type=int, default=2**30, help="address space per worker, bytes")
    args = p.parse_args(argv)
    root = tempfile.mkdtemp(prefix="trueslope-fuzz-")
    try:
        results, seconds = campaign(args.count, args.seed, max(1, args.jobs), args.timeout,
                                    args.memory, root)
    finally:
        shutil.rmtree(root, ignore_errors=True)
    report(results, seconds, args)
    return 0


if __name__ == "__main__":
    sys.exit(main())
