"""Hostile inputs never crash the engine or the command line, and never change the file.

Property (DEVELOPERS.md, "Errors": bad input must never crash the program or alter a
capture file): for every input of ``tests/support/hostile.py``, ``load_capture`` then
``analyse`` either measures, with finite headline figures, or refuses with a
``TrueslopeError`` whose message is one line naming the file (a ``SettingsError`` names its
``field`` instead, which the command line turns into the option); the file's bytes stay as
they were and nothing is written beside it. ``trueslope analyze`` on such inputs exits with
0 or 2 and every stderr line starts with ``trueslope: ``.

Hypothesis draws the seeds, derandomised so a run is the same everywhere; a failure prints
``generator seed``, and ``.venv/bin/python -m tests.support.hostile GENERATOR SEED FOLDER``
writes that input again. The long campaign is ``benchmarks/fuzz_campaign.py``.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import signal
import tempfile
import warnings
from datetime import timedelta
from pathlib import Path

import pytest
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st

from tests.support import hostile
from trueslope.core.analysis import analyse
from trueslope.core.cli import main
from trueslope.core.errors import SettingsError, TrueslopeError
from trueslope.core.io import load_capture
from trueslope.core.settings import Settings

#: Examples per generator (29 generators), and command-line runs: about 35 s on one core.
EXAMPLES = 10
CLI_EXAMPLES = 36
#: Longest time one input may take before it is reported as a hang (the deadline per
#: example is the hypothesis one; this one stops a loop that would never end).
HANG_S = 30
#: Address space the engine may take beyond what the test process already holds: a small
#: input that needs more is a fault, reported as the MemoryError it raises.
HEADROOM_BYTES = 3 * 2**30
#: Warning categories Python's default filters keep off a user's terminal.
SILENT_WARNINGS = (DeprecationWarning, PendingDeprecationWarning, ImportWarning, ResourceWarning)

# No shrinking: a smaller seed is not a simpler input, and the failing seed is what
# rebuilds the input.
FUZZ = settings(max_examples=EXAMPLES, deadline=timedelta(seconds=5), derandomize=True,
                database=None, print_blob=False, phases=[Phase.explicit, Phase.generate],
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])


class Hang(BaseException):
    """Raised by the alarm; a BaseException so no ``except Exception`` in the engine hides it."""


@contextlib.contextmanager
def guarded(what: str):
    """Stop a hang after :data:`HANG_S` and cap the address space (Linux) while the engine runs."""
    def ring(signum, frame):
        raise Hang(f"{what} ran for more than {HANG_S} s")

    old = signal.signal(signal.SIGALRM, ring)
    signal.alarm(HANG_S)
    limit = None
    try:
        import resource
        with open("/proc/self/statm") as f:
            used = int(f.read().split()[0]) * resource.getpagesize()
        limit = resource.getrlimit(resource.RLIMIT_AS)
        cap = used + HEADROOM_BYTES
        if limit[1] == resource.RLIM_INFINITY or cap < limit[1]:
            resource.setrlimit(resource.RLIMIT_AS, (cap, limit[1]))
    except (ImportError, OSError, ValueError):
        limit = None
    try:
        yield
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, old)
        if limit is not None:
            resource.setrlimit(resource.RLIMIT_AS, limit)


def digest(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def build_settings(case: hostile.Case) -> Settings:
    """The case's settings; a refusal must be a proper one, and then the defaults are used
    so the file itself is still tried."""
    try:
        return case.options.settings()
    except SettingsError as exc:
        problem = hostile.refusal_problem(exc, case.path)
        assert problem is None, f"{case.describe()}: {problem}"
        return Settings()


@pytest.mark.parametrize("generator", sorted(hostile.GENERATORS))
@FUZZ
@given(seed=st.integers(0, 2**32 - 1))
def test_hostile_input_is_measured_or_refused(generator, seed):
    with tempfile.TemporaryDirectory(prefix="trueslope-fuzz-") as folder:
        case = hostile.make_case(generator, seed, Path(folder))
        before, listing = digest(case.path), sorted(Path(folder).iterdir())
        chosen = build_settings(case)
        # one assertion per kind of fault, so hypothesis tells distinct faults apart; any
        # other exception propagates and is reported with its traceback
        try:
            with guarded(case.describe()):
                capture = load_capture(case.path, sample_interval_s=case.options.sample_interval_s)
                analysis = analyse(capture, chosen)
        except SettingsError as exc:
            problem = hostile.refusal_problem(exc, case.path)
            assert problem is None, f"{case.describe()}: {problem}"
        except TrueslopeError as exc:
            problem = hostile.refusal_problem(exc, case.path)
            assert problem is None, f"{case.describe()}: {problem}"
        else:
            problem = hostile.figure_problem(analysis)
            assert problem is None, f"{case.describe()}: {problem}"
        assert digest(case.path) == before, f"{case.describe()}: the input file changed"
        assert sorted(Path(folder).iterdir()) == listing, \
            f"{case.describe()}: files appeared beside the input"


@settings(FUZZ, max_examples=CLI_EXAMPLES,
          suppress_health_check=[*FUZZ.suppress_health_check, HealthCheck.function_scoped_fixture])
@given(generator=st.sampled_from(sorted(hostile.GENERATORS)), seed=st.integers(0, 2**32 - 1),
       cycles_csv=st.booleans())
def test_command_line_exits_0_or_2_with_trueslope_lines(generator, seed, cycles_csv, capsys):
    with tempfile.TemporaryDirectory(prefix="trueslope-fuzz-") as folder:
        case = hostile.make_case(generator, seed, Path(folder))
        before = digest(case.path)
        args = [str(case.path), *case.options.cli_args()]
        if cycles_csv:
            args.append(f"--cycles-csv={Path(folder) / 'cycles out.csv'}")
        capsys.readouterr()
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            try:
                with guarded(case.describe()):
                    code = main(args)
            except SystemExit as exc:  # argparse; the options are written so it never objects
                code = exc.code
        out, err = capsys.readouterr()
        where = f"{case.describe()}: exit {code}, stderr {err!r}"
        assert code in (0, 2), where
        # Python prints these on stderr in a terminal (pytest only collects them), on
        # lines of their own that do not start with "trueslope: "
        shown = [f"{w.category.__name__}: {w.message} ({Path(w.filename).name}:{w.lineno})"
                 for w in caught if not issubclass(w.category, SILENT_WARNINGS)]
        assert not shown, f"{where}; Python warnings reach stderr: {shown}"
        lines = err.splitlines()
        assert all(line.startswith("trueslope: ") for line in lines), where
        if code == 2:
            assert lines, where
        elif case.options.json:
            json.loads(out, parse_constant=lambda c: pytest.fail(f"{where}: {c} in the JSON"))
        else:
            assert out.strip(), where
        assert digest(case.path) == before, f"{case.describe()}: the input file changed"
