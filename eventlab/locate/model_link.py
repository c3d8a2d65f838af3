"""What the locators need from the network model, and the pairing of records with it.

Everything here asks the network layer (:mod:`eventlab.network.model`,
:mod:`eventlab.network.faults`); nothing solves a network of its own.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from eventlab.errors import ModelError
from eventlab.network.faults import FaultResult, FaultSpec, solve_fault
from eventlab.network.model import NetworkModel, Terminal, _station_key

from .inputs import TerminalPhasors
from .line import LineData, line_data
from .loops import loop_current, select_loop
from .single_ended import modified_takagi_reference


@dataclass(frozen=True)
class Pairing:
    """Ends paired with model terminals on one line.

    ``terminals[k]`` belongs to ``ends[k]``; ``ends[0]`` is the reference end.
    """

    line_id: str
    ends: tuple[TerminalPhasors, ...]
    terminals: tuple[Terminal, ...]
    how: tuple[str, ...]


def pair_ends(model: NetworkModel, ends: Sequence[TerminalPhasors], line: str | None = None,
              terminal_map: Mapping[str, str] | None = None) -> Pairing:
    """Pair each end with a model terminal.

    Parameters
    ----------
    model : NetworkModel
    ends : sequence of TerminalPhasors
        One or two ends; the first is the reference for distances.
    line : str, optional
        Line id; when None, the one line with a terminal at the first end's station.
    terminal_map : mapping, optional
        Explicit ``station name -> terminal id``.

    Notes
    -----
    Order of trust: ``TerminalPhasors.terminal_id`` when set, then
    ``terminal_map``, then the station name (case-insensitive, spaces and
    underscores alike) among the terminals of ``line``.

    Raises
    ------
    ModelError
        Naming what was looked for and what the model holds.
    """
    if not ends:
        raise ModelError("locate: no terminal phasors given")
    if len(ends) > 2:
        raise ModelError(f"locate: expected one or two line ends, got {len(ends)}")
    tmap = {_station_key(k): v for k, v in (terminal_map or {}).items()}
    terms: list[Terminal] = []
    how: list[str] = []
    line_id = line
    if line_id is not None:
        model.line(line_id)  # raises with the list of lines
    for k, end in enumerate(ends):
        t = None
        if end.terminal_id is not None:
            t, why = model.terminal(end.terminal_id), "terminal id"
        elif _station_key(end.station) in tmap:
            t, why = model.terminal(tmap[_station_key(end.station)]), "explicit map"
        else:
            cands = model.terminals_at_station(end.station)
            if line_id is not None:
                cands = tuple(c for c in cands if c.line == line_id)
            elif k > 0:
                cands = tuple(c for c in cands if c.line == terms[0].line)
            if len(cands) != 1:
                known = ", ".join(f"{x.id} (station {x.station}, line {x.line})"
                                  for x in model.terminals) or "(none)"
                what = "no terminal" if not cands else f"{len(cands)} terminals"
                on = f" on line {line_id}" if line_id else ""
                raise ModelError(f"{model.source_name}: record of station {end.station!r}: "
                                 f"{what} at that station{on}; model terminals are {known}; "
                                 f"give --line or pair explicitly")
            t, why = cands[0], "station name"
        if line_id is None:
            line_id = t.line
        if t.line != line_id:
            raise ModelError(f"{model.source_name}: terminal {t.id} is on line {t.line}, not on "
                             f"line {line_id}")
        if any(x.id == t.id for x in terms):
            raise ModelError(f"{model.source_name}: two records paired with terminal {t.id}")
        terms.append(t)
        how.append(why)
    if len(terms) == 2 and terms[0].bus == terms[1].bus:
        raise ModelError(f"{model.source_name}: terminals {terms[0].id} and {terms[1].id} are "
                         f"at the same end of line {line_id}")
    ends2 = tuple(dataclasses.replace(e, terminal_id=t.id) for e, t in zip(ends, terms,
                                                                           strict=True))
    return Pairing(line_id, ends2, tuple(terms), tuple(how))


def line_from(model: NetworkModel, line_id: str, terminal: Terminal) -> LineData:
    """The model line seen from ``terminal`` (its other end's terminal id, if any, or bus)."""
    ln = model.line(line_id)
    other_bus = ln.other_end(terminal.bus)
    other = [t for t in model.terminals_of_line(line_id) if t.bus == other_bus]
    return line_data(ln, terminal.bus, from_terminal=terminal.id,
                     to_terminal=other[0].id if other else other_bus)


def fraction_on_line(model: NetworkModel, line_id: str, terminal: Terminal,
                     fraction_from_terminal: float) -> float:
    """Convert a fraction from ``terminal`` into the solver's fraction from the ``from`` bus."""
    ln = model.line(line_id)
    f = float(fraction_from_terminal)
    return f if terminal.bus == ln.from_bus else 1.0 - f


def source_impedances(model: NetworkModel, bus: str) -> tuple[complex, complex]:
    """``(Z1, Z0)`` [ohm] of the model's source(s) at ``bus`` (parallel combination).

    Raises ModelError when the model has no source at that bus.
    """
    src = model.sources_at(bus)
    if not src:
        raise ModelError(f"{model.source_name}: no source at bus {bus!r} (the Eriksson-type "
                         f"method needs the source impedances behind both line ends)")
    y1 = sum(1.0 / s.z1_ohm for s in src)
    y0 = sum(1.0 / s.z0_ohm for s in src)
    return complex(1.0 / y1), complex(1.0 / y0)


def phasors_from_solution(result: FaultResult, model: NetworkModel, terminal_id: str,
                          *, station: str | None = None, keep_id: bool = True,
                          inception_s: float | None = None, phasor_time_s: float | None = None,
                          record_start=None, samples_per_cycle: int | None = None,
                          parallel_terminal_id: str | None = None) -> TerminalPhasors:
    """Fault-solver phasors of one terminal as a :class:`TerminalPhasors` (for tests, studies).

    Currents are returned into the line whatever the terminal's ``ct_polarity``.
    ``parallel_terminal_id``: the terminal of the mutually coupled parallel
    circuit at the same bus, whose residual current ``IA + IB + IC`` becomes
    ``i_parallel_residual``.
    """
    st = result.terminals[terminal_id]
    t = model.terminal(terminal_id)
    sign = -1.0 if t.ct_polarity == "reversed" else 1.0
    i_par = None
    if parallel_terminal_id is not None:
        tp = model.terminal(parallel_terminal_id)
        sp = -1.0 if tp.ct_polarity == "reversed" else 1.0
        i_par = complex(sp * np.sum(result.terminals[parallel_terminal_id].i_abc))
    return TerminalPhasors(
        terminal_id=terminal_id if keep_id else None, station=station or t.station,
        v_pre=st.v_abc_pre, i_pre=sign * st.i_abc_pre, v_fault=st.v_abc,
        i_fault=sign * st.i_abc,
        frequency_hz=model.system.frequency_hz, fault_type=result.spec.type,
        inception_s=inception_s, phasor_time_s=phasor_time_s, record_start=record_start,
        samples_per_cycle=samples_per_cycle, i_parallel_residual=i_par)


def distribution_angle(model: NetworkModel, line_id: str, terminal: Terminal,
                       fraction_from_terminal: float, fault_type: str) -> float:
    """Angle [rad] of the model's current distribution factor for the modified Takagi method.

    A bolted fault of ``fault_type`` is solved at the given position; with
    ``i_base`` and ``phi`` of
    :func:`~eventlab.locate.single_ended.modified_takagi_reference` taken from
    the model's terminal currents and ``I_f,loop`` the loop's fault current,
    ``T = angle(i_base / (I_f,loop exp(j phi)))`` (0 for a homogeneous system).
    """
    f = float(np.clip(fraction_on_line(model, line_id, terminal, fraction_from_terminal),
                      0.0, 1.0))
    res = solve_fault(model, FaultSpec(line_id, f, fault_type))
    end = phasors_from_solution(res, model, terminal.id)
    loop = select_loop(end.fault_type)
    base, phi = modified_takagi_reference(end, loop)
    i_f = loop_current(res.fault.i_abc, loop)
    return float(np.angle(base / (i_f * np.exp(1j * phi))))
