"""What the locators need from the network model, and the pairing of records with it.

Everything here asks the network layer (:mod:`eventlab.network.model`,
:mod:`eventlab.network.faults`); nothing solves a network of its own.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
from scipy.interpolate import CubicSpline

from eventlab.errors import ModelError
from eventlab.network.faults import FaultResult, FaultSpec, solve_fault
from eventlab.network.model import NetworkModel, Terminal, _station_key, without_line_capacitance
from eventlab.network.perunit import z_base_ohm
from eventlab.network.sequence import build_sequence_networks
from eventlab.symmetrical import abc_to_012

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


def station_terminals(model: NetworkModel, station: str, line_id: str | None = None,
                      first_line: str | None = None) -> tuple[tuple[Terminal, ...], str]:
    """Terminals a record's station name points at (on ``line_id`` or ``first_line``).

    Exactly (case-insensitive, spaces and underscores alike), else by its
    words: every word of the model's station name among the record's, or the
    other way round.  Returns the candidates and how they were found.
    """
    def on_line(cands):
        if line_id is not None:
            return tuple(c for c in cands if c.line == line_id)
        if first_line is not None:
            return tuple(c for c in cands if c.line == first_line)
        return tuple(cands)

    exact = on_line(model.terminals_at_station(station))
    if exact:
        return exact, "station name"
    # "VELLMOOR 230KV" for the model's "VELLMOOR": every word of the model's station
    # name among the record's (or the other way round)
    words = set(_station_key(station).split())
    part = on_line(t for t in model.terminals
                   if (w := set(_station_key(t.station).split())) and
                   (w <= words or (words and words <= w)))
    return part, "station name (partial match)"


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
    underscores alike) among the terminals of ``line``, then the words of the
    station name (every word of the model's name in the record's, or the
    other way round; one match only), and last, with two records of a
    two-terminal line of which one is paired, the line's other terminal.

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
    terms: list[Terminal | None] = [None] * len(ends)
    how: list[str] = [""] * len(ends)
    line_id = line
    if line_id is not None:
        model.line(line_id)  # raises with the list of lines
    problems: dict[int, str] = {}
    for k, end in enumerate(ends):
        if end.terminal_id is not None:
            terms[k], how[k] = model.terminal(end.terminal_id), "terminal id"
        elif _station_key(end.station) in tmap:
            terms[k], how[k] = model.terminal(tmap[_station_key(end.station)]), "explicit map"
        else:
            first_line = next((t.line for t in terms if t is not None), None)
            cands, why = station_terminals(model, end.station, line_id, first_line)
            if len(cands) == 1:
                terms[k], how[k] = cands[0], why
            else:
                problems[k] = "no terminal" if not cands else f"{len(cands)} terminals"
                continue
        if line_id is None:
            line_id = terms[k].line
    for k in problems:
        # two records of a two-terminal line, the other one paired: this is the other end
        other = [t for j, t in enumerate(terms) if j != k and t is not None]
        line_terms = model.terminals_of_line(line_id) if line_id is not None else ()
        if other and len(line_terms) == 2:
            rest = [t for t in line_terms if t.id != other[0].id]
            if len(rest) == 1:
                terms[k], how[k] = rest[0], "the line's other terminal"
                continue
        known = ", ".join(f"{x.id} (station {x.station}, line {x.line})"
                          for x in model.terminals) or "(none)"
        on = f" on line {line_id}" if line_id else ""
        raise ModelError(f"{model.source_name}: record of station {ends[k].station!r}: "
                         f"{problems[k]} at that station{on}; model terminals are {known}; "
                         f"{'give the line id, or ' if line is None else ''}pair the record "
                         f"with its terminal explicitly (--terminal on the command line)")
    for k, t in enumerate(terms):
        if t.line != line_id:
            raise ModelError(f"{model.source_name}: terminal {t.id} is on line {t.line}, not on "
                             f"line {line_id}")
        if any(x.id == t.id for x in terms[:k]):
            raise ModelError(f"{model.source_name}: two records paired with terminal {t.id}")
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


def external_two_port(model: NetworkModel, line_id: str, from_bus: str
                      ) -> tuple[np.ndarray, np.ndarray]:
    """The network outside a line as impedance matrices at its buses, ``(Z_ext1, Z_ext0)``.

    The line is taken out of the model (with its terminals; a parallel circuit
    keeps its own impedances but loses the zero-sequence coupling to it) and
    the 2 x 2 blocks of the bus impedance matrix ``Y^-1`` at ``from_bus`` and
    the line's other bus are returned per sequence [ohm], ``from_bus`` first.
    For the Eriksson-type method with a parallel circuit, a mesh or sources
    behind transformers (:func:`eventlab.locate.single_ended.distribution_factors_network`).

    Raises ModelError when the remaining network cannot be solved (a part of
    it without a source).
    """
    ln = model.line(line_id)
    far = ln.other_end(from_bus)
    lines = tuple(dataclasses.replace(x, mutual=None)
                  if (x.mutual is not None and x.mutual.line == line_id) else x
                  for x in model.lines if x.id != line_id)
    rest = dataclasses.replace(model, lines=lines,
                               terminals=tuple(t for t in model.terminals if t.line != line_id))
    net = build_sequence_networks(rest)
    idx = [net.node_names.index(from_bus), net.node_names.index(far)]
    zb = z_base_ohm(model.bus(from_bus).kv, model.system.base_mva)
    out = []
    for y in (net.y[1], net.y[0]):
        e = np.zeros((y.shape[0], 2), dtype=complex)
        e[idx[0], 0] = e[idx[1], 1] = 1.0
        try:
            z = np.linalg.solve(y, e)[idx, :]
        except np.linalg.LinAlgError as exc:
            raise ModelError(f"{model.source_name}: the network without line {line_id} cannot "
                             f"be solved ({exc})") from None
        out.append(z * zb)
    return out[0], out[1]


def sampled_distribution(model: NetworkModel, line_id: str, terminal: Terminal,
                         points: int = 25):
    """The model's own current distribution factors along a line, as a function of distance.

    ``D_s(d) = dI_s,terminal / I_s,fault`` (s = positive, zero sequence) for a
    bolted single-phase fault at route distance ``d`` [km] from ``terminal``,
    solved at ``points`` positions on the model without line capacitance (the
    Eriksson-type method's line is a series impedance) and interpolated by a
    cubic spline in ``d``.  It holds what a two-port cannot: the zero-sequence
    coupling of a parallel circuit.  Returns ``d -> (D1, D0)``.
    """
    ln = model.line(line_id)
    bare = without_line_capacitance(model)
    sign = -1.0 if terminal.ct_polarity == "reversed" else 1.0
    dists = np.linspace(0.0, ln.length_km, int(points))
    vals = []
    for d in dists:
        f = fraction_on_line(bare, line_id, terminal, d / ln.length_km)
        res = solve_fault(bare, FaultSpec(line_id, float(np.clip(f, 0.0, 1.0)), "AG"))
        st = res.terminals[terminal.id]
        di = abc_to_012(sign * (st.i_abc - st.i_abc_pre))
        i_f = res.fault.i_012
        vals.append((di[1] / i_f[1], di[0] / i_f[0]))
    vals = np.array(vals)
    splines = [CubicSpline(dists, part(vals[:, k])) for k in (0, 1) for part in (np.real, np.imag)]

    def at(d_km: float) -> tuple[complex, complex]:
        r1, i1, r0, i0 = (float(sp(d_km)) for sp in splines)
        return complex(r1, i1), complex(r0, i0)

    return at


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
