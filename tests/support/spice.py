"""The ngspice reference captures, and how to turn them into bench captures.

The stored captures (``tests/fixtures/spice``, see its README) are noiseless
simulator output. The acceptance tests degrade them as an oscilloscope
would -- noise added ahead of an ADC of 8 to 12 bits -- and write them in
every layout the importer reads, then compare trueslope's figures with the
reference figures computed from the noiseless output by
``tests/fixtures/spice/regenerate.py``. The ADC model is
:func:`tests.support.quantise.quantise`, the one every test uses.

From the project root, ``python -m tests.support.spice [bits] [noise_mV] [seed]``
prints the engine's figures against the truth for every case.
"""

from __future__ import annotations

import json
import os
import shutil
from pathlib import Path
from typing import Callable

import numpy as np

from .quantise import full_scale_for, quantise

__all__ = ["FIXTURES", "LAYOUTS", "WITH_TIME_COLUMN", "in_ci", "list_cases", "live_netlist",
           "load_case", "require_ngspice", "run_ngspice", "write_layout"]

FIXTURES = Path(__file__).resolve().parents[1] / "fixtures" / "spice"


def live_netlist(title: str, elements: str, tran: str) -> str:
    """A ramp netlist for the live tests: ``elements`` (node ``ramp``) reset by a hysteretic
    switch from 4 V to 0.05 V through 10 ohm, a ``.tran`` line, and a control block that
    writes the ramp on a uniform grid to ``ramp.txt``."""
    return f"""* {title}
{elements.strip()}
S1 ramp 0 ramp 0 reset
.model reset sw vt=2.025 vh=1.975 ron=10 roff=1e15
.options reltol=1e-6 abstol=1e-15 vntol=1e-9 method=trap
{tran}
.control
run
linearize v(ramp)
option numdgt=12
wrdata ramp.txt v(ramp)
quit 0
.endc
.end
"""


def run_ngspice(netlist: str, folder: Path, name: str = "live") -> tuple[np.ndarray, np.ndarray]:
    """Run a netlist in ngspice (batch mode) in ``folder``; its ``.control`` block must
    ``wrdata ramp.txt v(ramp)``. Returns time and ramp voltage on ngspice's grid."""
    import subprocess
    (folder / f"{name}.cir").write_text(netlist)
    proc = subprocess.run(["ngspice", "-b", f"{name}.cir"], cwd=folder, capture_output=True,
                          text=True, timeout=120)
    if proc.returncode != 0:
        raise RuntimeError(proc.stdout + proc.stderr)
    data = np.loadtxt(folder / "ramp.txt")
    return data[:, 0], data[:, 1]


def list_cases() -> list[str]:
    """Names of the stored cases, sorted.

    Raises FileNotFoundError when there are none: an empty list would turn every
    test parametrised over the cases into a silent skip.
    """
    names = sorted(p.stem for p in FIXTURES.glob("*.npz"))
    if not names:
        raise FileNotFoundError(f"no reference captures (*.npz) in {FIXTURES}")
    return names


def in_ci() -> bool:
    """True when the environment variable ``CI`` is set to a true value (``.ci/run`` sets
    ``CI=true``; most CI services do too)."""
    return os.environ.get("CI", "").strip().lower() in ("1", "true", "yes", "on")


def require_ngspice() -> str:
    """The path of ``ngspice``, or end the calling test: skipped on a developer's machine
    (with the reason), failed under CI, where a missing simulator must not pass unseen."""
    import pytest

    path = shutil.which("ngspice")
    if path is not None:
        return path
    why = ("ngspice is not on PATH, so the live simulator check cannot run "
           "(Debian package ngspice; bash packaging/dev.sh test installs it when run as root)")
    if in_ci():
        pytest.fail(f"{why}; CI is set, where this check must run", pytrace=False)
    pytest.skip(why)


def load_case(name: str) -> tuple[float, float, np.ndarray, dict]:
    """One stored case.

    Returns
    -------
    t0_s : float
        Time of the first sample, seconds.
    dt_s : float
        Sample interval, seconds.
    v : ndarray of float64
        Noiseless ramp voltage, volts.
    truth : dict
        The JSON sidecar: circuit values, expected signature, closed forms and
        the ``reference`` figures.
    """
    with np.load(FIXTURES / f"{name}.npz") as z:
        t0, dt, v = float(z["t0_s"]), float(z["dt_s"]), z["v"].astype(np.float64)
    truth = json.loads((FIXTURES / f"{name}.json").read_text())
    return t0, dt, v, truth


# ------------------------------------------------------------------ writers
# Every writer takes (path, t0_s, dt_s, v) and returns the keyword arguments
# the importer needs besides the path (only a layout without any time
# information needs one: the sample interval), plus ``_gain``/``_offset_v``
# for a layout without a voltage unit.

def _time(t0: float, dt: float, n: int) -> np.ndarray:
    return t0 + dt * np.arange(n)


def _text_columns(path: Path, cols: list[np.ndarray], fmts: list[str], sep: str,
                  header: str, preamble: list[str] = (), decimal_comma: bool = False) -> None:
    fmt = sep.join(fmts)
    body = "\n".join(fmt % row for row in zip(*cols))
    if decimal_comma:
        body = body.replace(".", ",")
    lines = list(preamble) + [header, body]
    path.write_text("\n".join(lines) + "\n")


def write_csv_units(path: Path, t0: float, dt: float, v: np.ndarray) -> dict:
    """Comma separated, units in the header: ``time [s],CH1 [mV]`` (voltage in millivolts)."""
    _text_columns(path, [_time(t0, dt, v.size), 1e3 * v], ["%.10e", "%.6f"], ",",
                  "time [s],CH1 [mV]")
    return {}


def write_semicolon_comma(path: Path, t0: float, dt: float, v: np.ndarray) -> dict:
    """Semicolon separated with a decimal comma (as written where the comma is the decimal mark)."""
    _text_columns(path, [_time(t0, dt, v.size), v], ["%.10e", "%.7f"], ";",
                  "time [s];CH1 [V]", decimal_comma=True)
    return {}


def write_tab(path: Path, t0: float, dt: float, v: np.ndarray) -> dict:
    """Tab separated."""
    _text_columns(path, [_time(t0, dt, v.size), v], ["%.10e", "%.7f"], "\t",
                  "time [s]\tCH1 [V]")
    return {}


def write_spaces(path: Path, t0: float, dt: float, v: np.ndarray) -> dict:
    """Columns separated by runs of spaces (fixed-width columns), no units in the header."""
    _text_columns(path, [_time(t0, dt, v.size), v], ["%18.10e", "%14.7f"], "   ",
                  f"{'time':>18s}   {'CH1':>14s}")
    return {}


def write_preamble(path: Path, t0: float, dt: float, v: np.ndarray) -> dict:
    """A preamble of ``key: value`` lines, then a comma-separated table with units."""
    pre = ["instrument: bench scope (simulated)", "channel: CH1", "coupling: DC",
           f"record length: {v.size}", "probe: 1x", ""]
    _text_columns(path, [_time(t0, dt, v.size), v], ["%.10e", "%.7f"], ",",
                  "time [s],CH1 [V]", preamble=pre)
    return {}


def write_no_time(path: Path, t0: float, dt: float, v: np.ndarray) -> dict:
    """Voltage column only; the sample interval given in the preamble."""
    pre = ["channel: CH1", f"sample interval: {dt:.10e} s", ""]
    path.write_text("\n".join(pre + ["CH1 [V]"] + [f"{x:.7f}" for x in v]) + "\n")
    return {}


def write_npy(path: Path, t0: float, dt: float, v: np.ndarray) -> dict:
    """NumPy ``.npy`` of the voltage alone; the sample interval is passed to the importer."""
    np.save(path, np.asarray(v, dtype=np.float64))
    return {"sample_interval_s": dt}


def write_wav(path: Path, t0: float, dt: float, v: np.ndarray,
              full_scale_v: tuple[float, float] | None = None) -> dict:
    """16-bit PCM WAV (``scipy.io.wavfile``), rate = 1 / dt.

    A WAV file holds no unit: the ADC range ``full_scale_v`` (lo, hi) maps onto
    the int16 range, ``code = round((v - mid) / span * 32768)``, so a capture
    quantised to 8-16 bits over that range keeps its codes exactly. The
    importer reads fractions of full scale ``x = code / 32768``; the returned
    ``_gain`` (span) and ``_offset_v`` (mid) take them back to volts,
    ``v = _gain * x + _offset_v``.
    """
    from scipy.io import wavfile
    x = np.asarray(v, dtype=float)
    lo, hi = full_scale_v if full_scale_v is not None else full_scale_for(x)
    mid, span = 0.5 * (lo + hi), hi - lo
    codes = np.clip(np.round((x - mid) / span * 32768.0), -32768, 32767).astype(np.int16)
    wavfile.write(path, int(round(1.0 / dt)), codes)
    return {"_gain": span, "_offset_v": mid}


#: layout name -> (file suffix, writer)
LAYOUTS: dict[str, tuple[str, Callable[..., dict]]] = {
    "csv_units": (".csv", write_csv_units),
    "semicolon_comma": (".csv", write_semicolon_comma),
    "tab": (".tsv", write_tab),
    "spaces": (".txt", write_spaces),
    "preamble": (".csv", write_preamble),
    "no_time": (".csv", write_no_time),
    "npy": (".npy", write_npy),
    "wav": (".wav", write_wav),
}


#: layouts that carry a time column
WITH_TIME_COLUMN = frozenset({"csv_units", "semicolon_comma", "tab", "spaces", "preamble"})


def write_layout(layout: str, folder: Path, stem: str, t0: float, dt: float, v: np.ndarray,
                 full_scale_v: tuple[float, float] | None = None) -> tuple[Path, dict]:
    """Write ``v`` in ``layout`` under ``folder``.

    Returns the path and the importer's keyword arguments; keys starting with
    ``_`` are not for the importer: ``_gain`` and ``_offset_v`` take a
    unitless layout's values back to volts (``v = _gain * x + _offset_v``).
    ``full_scale_v`` is the ADC range the samples were quantised over (used by
    the layouts that store codes).
    """
    suffix, writer = LAYOUTS[layout]
    path = Path(folder) / f"{stem}{suffix}"
    if writer is write_wav:
        return path, writer(path, t0, dt, v, full_scale_v)
    return path, writer(path, t0, dt, v)


# ------------------------------------------------------------------ report

def _report(argv: list[str]) -> int:
    """Print trueslope's figures against the truth, per case, for one quantisation.

    ``python -m tests.support.spice [bits] [noise_mV] [seed]`` from the project root;
    bits 0 = noiseless.
    """
    from trueslope.core.analysis import analyse
    from trueslope.core.capture import Capture
    from trueslope.core.settings import Settings

    bits = int(argv[0]) if argv else 8
    noise_v = 1e-3 * float(argv[1]) if len(argv) > 1 else 2e-3
    seed = int(argv[2]) if len(argv) > 2 else 1
    try:
        from trueslope.core.circuit import CircuitContext
    except ImportError:
        try:  # before core/context.py was split
            from trueslope.core.context import CircuitContext
        except ImportError:
            CircuitContext = None
    print(f"{bits} bits, {noise_v * 1e3:g} mV noise, seed {seed}; d = trueslope - truth")
    print(f"{'case':20s} {'d slope %':>9s} {'d freq %':>9s} {'d start mV':>10s} "
          f"{'d end mV':>8s} {'NL %':>7s} {'true NL':>7s} {'tol pp':>6s} {'floor':>6s} "
          f"{'signature (expected)':>44s} {'R/R_true':>8s}")
    for name in list_cases():
        t0, dt, v, truth = load_case(name)
        ref = truth["reference"]
        x = quantise(v, bits, full_scale_for(v), noise_v, seed) if bits else v
        cap = Capture(source=name, channels={"CH1": x}, sample_interval_s=dt, t0_s=t0)
        ctx = None
        if CircuitContext is not None:
            ctx = CircuitContext(capacitance_f=truth["capacitance_f"])
        a = analyse(cap, Settings(context=ctx))
        f = a.figures
        sig = getattr(a.diagnosis, "signature", None)
        r = getattr(a.diagnosis, "equivalent_shunt_ohm", None)
        r_true = truth["equivalent_shunt_ohm"]
        ratio = f"{r / r_true:8.3f}" if (r is not None and r_true) else f"{'-':>8s}"
        print(f"{name:20s} {100 * (f.slope_v_per_s / ref['slope_v_per_s'] - 1):+9.3f} "
              f"{100 * (f.frequency_hz / ref['frequency_hz'] - 1):+9.4f} "
              f"{1e3 * (f.start_v - ref['start_v']):+10.1f} {1e3 * (f.end_v - ref['end_v']):+8.1f} "
              f"{f.nonlinearity_pct:7.3f} {ref['nonlinearity_pct']:7.3f} "
              f"{0.15 + 0.15 * ref['nonlinearity_pct']:6.3f} {f.nonlinearity_floor_pct:6.3f} "
              f"{str(sig) + ' (' + truth['signature'] + ')':>44s} {ratio}")
    return 0


if __name__ == "__main__":
    import sys
    sys.exit(_report(sys.argv[1:]))
