"""ngspice netlists of the recovery-voltage test on a Dow network (SOURCES.md [ngspice]).

The network: the main capacitor ``C`` on node ``ramp`` and, per branch, a series
``R_i = tau_i / C_i`` and ``C_i = ratio_i C`` to ground (SOURCES.md [absorption]).
Voltage-controlled switches driven by PWL sources charge it, short it and open it;
the control block writes ``v(ramp)`` to ``ramp.txt`` on ngspice's own time points
(so :func:`tests.support.spice.run_ngspice` reads it).
"""

from __future__ import annotations

from typing import Sequence

__all__ = ["dow_elements", "short_time_netlist", "standard_test_netlist"]

_SWITCH = ".model sw sw vt=0.5 vh=0.1 ron={ron} roff=1e16"
_OPTIONS = ".options reltol=1e-6 abstol=1e-18 vntol=1e-10 chgtol=1e-20 method=gear maxord=2"
_CONTROL = """.control
run
option numdgt=12
wrdata ramp.txt v(ramp)
quit 0
.endc
.end
"""


def dow_elements(c_f: float, branches: Sequence[tuple[float, float]], ic_v: float | None) -> str:
    """The main capacitor on ``ramp`` and one series R-C per ``(ratio, tau_s)``; with
    ``ic_v`` every capacitor starts at that voltage (``uic``), else at 0."""
    ic = "" if ic_v is None else f" IC={ic_v:.12g}"
    lines = [f"C0 ramp 0 {c_f:.12g}{ic}"]
    for i, (ratio, tau) in enumerate(branches, 1):
        ci = ratio * c_f
        lines.append(f"R{i} ramp b{i} {tau / ci:.12g}")
        lines.append(f"C{i} b{i} 0 {ci:.12g}{ic}")
    return "\n".join(lines)


def short_time_netlist(c_f: float, branches: Sequence[tuple[float, float]], charge_v: float,
                       short_s: float, read_s: float, short_ohm: float) -> str:
    """Every capacitor at ``charge_v`` (steady), shorted through ``short_ohm`` for
    ``short_s`` from t = 0, then open until ``short_s + read_s``."""
    edge = short_s * 1e-4
    return f"""* short-time recovery of a Dow network
{dow_elements(c_f, branches, charge_v)}
Vsh sh 0 PWL(0 1 {short_s:.12g} 1 {short_s + edge:.12g} 0)
Ssh ramp 0 sh 0 sw
{_SWITCH.format(ron=f"{short_ohm:.12g}")}
{_OPTIONS}
.tran {read_s / 2000:.6g} {short_s + read_s:.12g} 0 {read_s / 2000:.6g} uic
{_CONTROL}"""


def standard_test_netlist(c_f: float, branches: Sequence[tuple[float, float]], charge_v: float,
                          charge_s: float, short_s: float, short_ohm: float, read_s: float,
                          max_step_s: float) -> str:
    """From rest: ``charge_v`` through a 1 mohm switch for ``charge_s``, then a short
    through ``short_ohm`` for ``short_s``, then open for ``read_s``."""
    t1, t2 = charge_s, charge_s + short_s
    e = 1e-6
    return f"""* standard recovery-voltage test of a Dow network
{dow_elements(c_f, branches, None)}
Vc src 0 {charge_v:.12g}
Vch ch 0 PWL(0 1 {t1:.12g} 1 {t1 + e:.12g} 0)
Sch src ramp ch 0 swc
Vsh sh 0 PWL(0 0 {t1 + e:.12g} 0 {t1 + 2 * e:.12g} 1 {t2:.12g} 1 {t2 + e:.12g} 0)
Ssh ramp 0 sh 0 sws
{_SWITCH.replace("sw sw", "swc sw").format(ron="1e-3")}
{_SWITCH.replace("sw sw", "sws sw").format(ron=f"{short_ohm:.12g}")}
{_OPTIONS}
.tran {max_step_s:.6g} {t2 + read_s:.12g} 0 {max_step_s:.6g} uic
{_CONTROL}"""
