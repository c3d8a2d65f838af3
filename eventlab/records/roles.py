"""Channel roles: which channels of a record are a line terminal's VA .. IC.

A record's analog channels are mapped to the quantities of one or more line
terminals, automatically from the C37.111 ``ph`` field (clause 6.4), the
``ccbm`` circuit field, the channel names and the units, or explicitly from
a channel map (the network model's ``[[terminal]] channels`` table: keys
``VA VB VC IA IB IC`` and optional ``IN VN IP`` (parallel circuit residual),
``TRIP...``, ``BKR...``; values are record channel names).

The channels handed back are rescaled to SI units (kV -> V, kA -> A, mV,
mA), so callers can take their ``values`` as [V] and [A].  Matching is
generous but deterministic: the first channel in file order wins.  When no
terminal can be formed, :class:`~eventlab.errors.ChannelMapError` lists what
was found and what is missing.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass, replace

import numpy as np

from eventlab.errors import ChannelMapError
from eventlab.records.model import AnalogChannel, Record, StatusChannel

#: unit text -> (quantity, factor to SI)
# the milli and mega prefixes differ only in case (mV and MV, mA and MA): matched as
# written; every other unit below without regard to case
_UNITS = {"mV": ("V", 1e-3), "MV": ("V", 1e6), "mA": ("I", 1e-3)}
# unit words found in recorders' cfg files (V, kV, KV, Volts, A, kA, Amps ...)
_UNIT_WORDS = {
    "v": ("V", 1.0), "kv": ("V", 1e3), "volt": ("V", 1.0), "volts": ("V", 1.0),
    "kilovolt": ("V", 1e3), "kilovolts": ("V", 1e3),
    "a": ("I", 1.0), "ka": ("I", 1e3), "amp": ("I", 1.0), "amps": ("I", 1.0),
    "ampere": ("I", 1.0), "amperes": ("I", 1.0), "kiloamp": ("I", 1e3),
    "kiloamps": ("I", 1e3), "kiloampere": ("I", 1e3), "kiloamperes": ("I", 1e3),
}


def _unit(text: str) -> tuple[str, float] | None:
    """(quantity "V"/"I", factor to SI) of a cfg ``uu`` field, or None when unknown."""
    u = text.strip()
    return _UNITS.get(u) or _UNIT_WORDS.get(u.casefold())


_PHASES = {"A": "A", "B": "B", "C": "C", "N": "N", "G": "N", "L1": "A", "L2": "B", "L3": "C",
           "1": "A", "2": "B", "3": "C",
           "AN": "A", "BN": "B", "CN": "C", "AG": "A", "BG": "B", "CG": "C", "R": "N",
           "0": "N", "3I0": "N", "3V0": "N", "E": "N"}
_ANALOG_TOKEN = re.compile(
    r"^(?:(?P<par>3I0P|I0P|INP|IRP|IP|IMUT|I_?PAR\w*)|(?P<res>3I0|3IO|3V0|3VO|I0|V0|IO|VO)"
    r"|(?P<q>[VUI])(?:PH)?(?P<ph>L1|L2|L3|AN|BN|CN|AG|BG|CG|A|B|C|N|G|R|E))$")
_PARALLEL_WORD = re.compile(r"PARALLEL|MUTUAL|\bPAR\b")
_NOISE = frozenset({"PH", "PHASE", "PAR", "PARALLEL", "MUTUAL"})
#: names of line-to-line voltage channels (VAB, U12, V_BC, UL1L2 ...)
_LINE_TO_LINE = re.compile(r"(?:^|[^A-Z])[VU]_?(?P<pair>AB|BC|CA|L1L2|L2L3|L3L1|12|23|31)"
                           r"(?:[^A-Z0-9]|$)")
_PAIRS = {"AB": "AB", "BC": "BC", "CA": "CA", "L1L2": "AB", "L2L3": "BC", "L3L1": "CA",
          "12": "AB", "23": "BC", "31": "CA"}
_TRIP = re.compile(r"TRIP|TRP|(?:^|[^0-9])94(?:[^0-9]|$)")
_BREAKER = re.compile(r"52\s*[AB]?|(?:^|[^A-Z])CB(?:[^A-Z]|$)|BKR|BRK|BREAKER|\bCB")
REQUIRED = ("VA", "VB", "VC", "IA", "IB", "IC")
OPTIONAL = ("IN", "VN", "IP")


@dataclass(frozen=True)
class TerminalChannels:
    """The channels of one line terminal, analog ones in SI units ([V], [A])."""

    label: str                                   # circuit id (ccbm) or "" for one terminal
    voltages: tuple[AnalogChannel, AnalogChannel, AnalogChannel]   # A, B, C line-to-ground
    currents: tuple[AnalogChannel, AnalogChannel, AnalogChannel]   # A, B, C
    neutral_current: AnalogChannel | None = None
    neutral_voltage: AnalogChannel | None = None
    parallel_residual: AnalogChannel | None = None
    trips: tuple[StatusChannel, ...] = ()
    breakers: tuple[StatusChannel, ...] = ()
    # phase currents not recorded but derived (from the residual, ``derive_phase_current``)
    derived: tuple[str, ...] = ()

    @property
    def v_abc(self) -> np.ndarray:
        """Phase voltages, shape (3, n) [V]."""
        return np.vstack([c.values for c in self.voltages])

    @property
    def i_abc(self) -> np.ndarray:
        """Phase currents, shape (3, n) [A]."""
        return np.vstack([c.values for c in self.currents])

    def roles(self) -> dict[str, str]:
        """Role -> channel name, e.g. ``{"VA": "L01 VA", ..., "TRIP1": "L01 TRIP"}``."""
        out = {k: c.name for k, c in zip(("VA", "VB", "VC"), self.voltages, strict=True)}
        out.update({k: c.name for k, c in zip(("IA", "IB", "IC"), self.currents, strict=True)})
        for key, ch in (("IN", self.neutral_current), ("VN", self.neutral_voltage),
                        ("IP", self.parallel_residual)):
            if ch is not None:
                out[key] = ch.name
        for k, ch in enumerate(self.trips):
            out[f"TRIP{k + 1}"] = ch.name
        for k, ch in enumerate(self.breakers):
            out[f"BKR{k + 1}"] = ch.name
        return out


def to_si(ch: AnalogChannel) -> AnalogChannel:
    """``ch`` with values in [V] or [A] when its unit is a multiple of them (kV, kA, mV, mA)."""
    q = _unit(ch.unit)
    if q is None:
        return ch
    si_unit = "V" if q[0] == "V" else "A"
    if q[1] == 1.0:
        return ch if ch.unit == si_unit else replace(ch, unit=si_unit)
    f = q[1]
    v = ch.values * f
    v.setflags(write=False)
    return replace(ch, unit=si_unit, a=ch.a * f, b=ch.b * f, values=v)


def quantity(ch: AnalogChannel) -> str:
    """"V", "I", or "" when the unit is neither a voltage nor a current unit."""
    q = _unit(ch.unit)
    return q[0] if q is not None else ""


def _tokens(text: str) -> list[str]:
    return [t for t in re.split(r"[\s_\-./:]+", text.upper()) if t]


def classify_analog(ch: AnalogChannel) -> tuple[str, str]:
    """(role, group) of an analog channel.

    The role is one of VA VB VC VN IA IB IC IN IP or "" (not a terminal
    quantity); the group is the ``ccbm`` circuit, or, without one, what the
    name holds besides the role (``"L01 VA"`` -> ``"L01"``).  The unit decides
    voltage or current where it is known; the ``ph`` field decides the phase
    where it is given.
    """
    q = quantity(ch)
    toks = _tokens(ch.name)
    role, matched = "", None
    cands = [(t, (t,)) for t in toks] + [  # "I L1", "V_A": quantity and phase apart
        (toks[i] + toks[i + 1], (toks[i], toks[i + 1])) for i in range(len(toks) - 1)
        if toks[i] in ("V", "U", "I")]
    for t, parts in cands:
        m = _ANALOG_TOKEN.match(t)
        if m is None:
            continue
        if m.group("par"):
            cand = "IP"
        elif m.group("res"):
            cand = ("V" if t.lstrip("3")[0] == "V" else "I") + "N"
        else:
            cand = ("V" if m.group("q") in "VU" else "I") + _PHASES[m.group("ph")]
        if q and cand[0] != q:
            continue
        role, matched = cand, parts
        break
    ph = _PHASES.get(ch.phase.strip().upper().replace(" ", "").removeprefix("PH"))
    if ph and role != "IP" and (q or role):
        role = (q or role[0]) + ph
    if role.startswith("I") and _PARALLEL_WORD.search(ch.name.upper()):
        role = "IP"
    group = ch.circuit.strip()
    if not group and matched is not None:
        # without a ccbm, what the name holds besides its role is the circuit
        # ("L01 VA" -> "L01"); a name that gave no role ("CH4", mapped from
        # its ph field and unit) says nothing about the circuit
        used = list(matched)
        rest = []
        for t in toks:
            if t in used:
                used.remove(t)
            elif t not in _NOISE:
                rest.append(t)
        group = " ".join(rest)
    return role, group


def classify_status(ch: StatusChannel) -> tuple[str, str]:
    """("TRIP" | "BKR" | "", group) of a status channel."""
    name = ch.name.upper()
    role = "TRIP" if _TRIP.search(name) else ("BKR" if _BREAKER.search(name) else "")
    group = ch.circuit.strip()
    if not group:
        toks = [t for t in _tokens(ch.name) if not (_TRIP.search(t) or _BREAKER.search(t))
                and t not in ("A", "B", "C", "PH")]
        group = " ".join(toks)
    return role, group


def map_terminals(record: Record, channel_map: Mapping[str, str] | None = None, *,
                  label: str | None = None) -> tuple[TerminalChannels, ...]:
    """Find the line terminals a record holds.

    Parameters
    ----------
    record : Record
    channel_map : mapping, optional
        Role -> channel name (``VA VB VC IA IB IC`` required, ``IN VN IP``
        optional, keys starting ``TRIP`` or ``BKR``/``52`` name status
        channels).  Given, exactly one terminal is returned.
    label : str, optional
        Label of the terminal built from ``channel_map`` (default: the
        ``ccbm`` of its IA channel).

    Returns
    -------
    tuple of TerminalChannels
        In order of first appearance in the record; channels in SI units.

    Raises
    ------
    ChannelMapError
        Listing the roles found and the ones missing.
    """
    if channel_map is not None:
        return (_from_map(record, channel_map, label),)
    return _auto(record)


def _from_map(record: Record, channel_map: Mapping[str, str], label: str | None):
    where = record.source or record.station
    roles: dict[str, AnalogChannel] = {}
    trips, bkrs = [], []
    for key, name in channel_map.items():
        k = str(key).strip().upper()
        if k in REQUIRED or k in OPTIONAL:
            roles[k] = _lookup(record.analog, name, k, where, "analog")
        elif k.startswith("TRIP"):
            trips.append(_lookup(record.status, name, k, where, "status"))
        elif k.startswith(("BKR", "52", "CB")):
            bkrs.append(_lookup(record.status, name, k, where, "status"))
        else:
            raise ChannelMapError(f"{where}: channel map key {key!r} is not a role; expected "
                                  f"{', '.join(REQUIRED + OPTIONAL)}, TRIP..., BKR...")
    missing = [k for k in REQUIRED if k not in roles]
    derived: tuple[str, ...] = ()
    if len(missing) == 1 and missing[0] in ("IA", "IB", "IC") and "IN" in roles:
        roles[missing[0]] = derive_phase_current(roles, missing[0])
        derived, missing = (missing[0],), []
    if missing:
        raise ChannelMapError(f"{where}: channel map lacks {', '.join(missing)}; it gives "
                              f"{', '.join(sorted(roles)) or 'nothing'}")
    lab = label if label is not None else next(
        roles[k] for k in ("IA", "IB", "IC") if k not in derived).circuit.strip()
    return TerminalChannels(
        label=lab, voltages=tuple(to_si(roles[k]) for k in ("VA", "VB", "VC")),
        currents=tuple(to_si(roles[k]) for k in ("IA", "IB", "IC")),
        neutral_current=to_si(roles["IN"]) if "IN" in roles else None,
        neutral_voltage=to_si(roles["VN"]) if "VN" in roles else None,
        parallel_residual=to_si(roles["IP"]) if "IP" in roles else None,
        trips=tuple(trips), breakers=tuple(bkrs), derived=derived)


def _lookup(channels, name, key, where, kind):
    for ch in channels:
        if ch.name == name:
            return ch
    low = str(name).strip().casefold()
    for ch in channels:
        if ch.name.strip().casefold() == low:
            return ch
    names = ", ".join(ch.name for ch in channels) or "none"
    raise ChannelMapError(f"{where}: channel map {key} = {name!r}: no {kind} channel of that "
                          f"name; the record has: {names}")


def _auto(record: Record) -> tuple[TerminalChannels, ...]:
    where = record.source or record.station
    groups: dict[str, dict[str, AnalogChannel]] = {}
    order: list[str] = []
    for ch in record.analog:
        role, group = classify_analog(ch)
        if not role:
            continue
        g = groups.setdefault(group, {})
        if group not in order:
            order.append(group)
        g.setdefault(role, ch)
    full_v = [g for g in order if all(k in groups[g] for k in ("VA", "VB", "VC"))]
    derived: dict[str, tuple[str, ...]] = {}
    if not full_v:
        # line-to-line VTs only (VAB, VBC, VCA): phase-to-ground voltages without their
        # zero sequence; they serve every circuit of the record, as a bus VT set does
        ll = phase_voltages_from_line_to_line(record.analog)
        if ll is not None:
            groups.setdefault("", {})
            if "" not in order:
                order.append("")
            groups[""].update(dict(zip(("VA", "VB", "VC"), ll, strict=True)))
            full_v = [""]
    terminals = []
    for g in order:
        roles = groups[g]
        missing = [k for k in ("IA", "IB", "IC") if k not in roles]
        if len(missing) == 1 and "IN" in roles:
            # two phase CTs and the residual (a common economy): the third phase is
            # the residual less the other two
            roles[missing[0]] = derive_phase_current(roles, missing[0])
            derived[g] = (missing[0],)
        if not all(k in roles for k in ("IA", "IB", "IC")):
            continue
        vsrc = roles if all(k in roles for k in ("VA", "VB", "VC")) else (
            groups[full_v[0]] if len(full_v) == 1 else None)
        if vsrc is None:
            continue
        terminals.append((g, roles, vsrc))
    if not terminals:
        found = "; ".join(f"{g or '(no circuit)'}: {' '.join(sorted(groups[g]))}"
                          for g in order) or "no voltage or current channels"
        want = []
        for g in order:
            miss = [k for k in REQUIRED if k not in groups[g]]
            if miss:
                want.append(f"{g or '(no circuit)'} lacks {' '.join(miss)}")
        delta = [ch.name for ch in record.analog if _LINE_TO_LINE.search(ch.name.upper())
                 and quantity(ch) == "V"]
        raise ChannelMapError(f"{where}: no line terminal with VA VB VC IA IB IC; found "
                              f"{found}" + (f"; {', '.join(want)}" if want else "")
                              + (" (several voltage sets, none of them the terminal's own)"
                                 if len(full_v) > 1 else "")
                              + (f" (the record's {', '.join(delta)} look line-to-line: "
                                 f"eventlab needs the phase-to-ground voltages)"
                                 if delta else ""))
    labels = [g for g, _, _ in terminals]
    status_by = {lab: ([], []) for lab in labels}
    for ch in record.status:
        role, group = classify_status(ch)
        if not role:
            continue
        target = None
        if group in status_by:
            target = group
        elif len(labels) == 1 and (not group or not ch.circuit.strip()):
            target = labels[0]
        else:
            hits = [lab for lab in labels if lab and lab.upper() in ch.name.upper()]
            if len(hits) == 1:
                target = hits[0]
        if target is not None:
            status_by[target][0 if role == "TRIP" else 1].append(ch)
    out = []
    for g, roles, vsrc in terminals:
        out.append(TerminalChannels(
            label=g, voltages=tuple(to_si(vsrc[k]) for k in ("VA", "VB", "VC")),
            currents=tuple(to_si(roles[k]) for k in ("IA", "IB", "IC")),
            neutral_current=to_si(roles["IN"]) if "IN" in roles else None,
            neutral_voltage=to_si(vsrc["VN"]) if "VN" in vsrc else None,
            parallel_residual=to_si(roles["IP"]) if "IP" in roles else None,
            trips=tuple(status_by[g][0]), breakers=tuple(status_by[g][1]),
            derived=derived.get(g, ()) + (("VA", "VB", "VC") if vsrc["VA"].name.startswith(
                "VA = ") else ())))
    return tuple(out)


def phase_voltages_from_line_to_line(channels) -> tuple[AnalogChannel, ...] | None:
    """VA, VB, VC [V] from line-to-line voltage channels, their zero sequence unknown.

    Three channels named VAB, VBC, VCA (or U12, V_L1L2 ...), or two of them (the
    third is minus their sum), in a voltage unit.  ``VA = (VAB - VCA) / 3`` and
    the like: the phase-to-ground set whose zero sequence is nought and whose
    differences are the line-to-line voltages (Fortescue: line-to-line
    quantities hold no zero sequence).  Named ``"VA = (VAB - VCA)/3"``; None
    when fewer than two are found.
    """
    found: dict[str, AnalogChannel] = {}
    for ch in channels:
        m = _LINE_TO_LINE.search(ch.name.upper())
        if m and quantity(ch) == "V":
            found.setdefault(_PAIRS[m.group("pair")], to_si(ch))
    if len(found) < 2:
        return None
    vals = {k: np.asarray(c.values, dtype=float) for k, c in found.items()}
    for k, (a, b) in {"AB": ("BC", "CA"), "BC": ("CA", "AB"), "CA": ("AB", "BC")}.items():
        if k not in vals:
            vals[k] = -(vals[a] + vals[b])
    names = {k: (found[k].name if k in found else f"-({found[a].name} + {found[b].name})")
             for k, (a, b) in {"AB": ("BC", "CA"), "BC": ("CA", "AB"),
                               "CA": ("AB", "BC")}.items()}
    base = next(iter(found.values()))
    out = []
    for ph, plus, minus in (("A", "AB", "CA"), ("B", "BC", "AB"), ("C", "CA", "BC")):
        v = (vals[plus] - vals[minus]) / 3.0
        v.setflags(write=False)
        out.append(replace(found.get(plus, base), name=f"V{ph} = ({names[plus]} - "
                                                        f"{names[minus]})/3",
                           phase=ph, values=v))
    return tuple(out)


def derive_phase_current(roles: Mapping[str, AnalogChannel], phase: str) -> AnalogChannel:
    """The phase current ``phase`` (``"IA"`` .. ``"IC"``) as ``IN`` less the other two [A].

    For a recorder wired with two phase CTs and the residual (``IN = IA + IB +
    IC``).  The channel is named ``"IB = IN - IA - IC"`` (for IB), in amperes.
    """
    others = [k for k in ("IA", "IB", "IC") if k != phase]
    res = to_si(roles["IN"])
    vals = res.values - sum(to_si(roles[k]).values for k in others)
    vals = np.array(vals, dtype=float)
    vals.setflags(write=False)
    return replace(res, name=f"{phase} = {res.name} - {' - '.join(roles[k].name for k in others)}",
                   phase=phase[1], values=vals)


def channel_roles(record: Record, channel_map: Mapping[str, str] | None = None
                  ) -> tuple[list[str], list[str]]:
    """Role text of every analog and status channel ("" where none), for display.

    With several terminals the role is prefixed by the terminal label
    (``"L01 IA"``).  A record that cannot be mapped gives all "".
    """
    a_roles = [""] * len(record.analog)
    s_roles = [""] * len(record.status)
    try:
        terms = map_terminals(record, channel_map)
    except ChannelMapError:
        return a_roles, s_roles
    a_pos = {ch.index: k for k, ch in enumerate(record.analog)}
    s_pos = {ch.index: k for k, ch in enumerate(record.status)}
    many = len(terms) > 1
    for t in terms:
        pairs = list(zip(("VA", "VB", "VC"), t.voltages, strict=True)) + list(
            zip(("IA", "IB", "IC"), t.currents, strict=True))
        for role, ch in (("IN", t.neutral_current), ("VN", t.neutral_voltage),
                         ("IP", t.parallel_residual)):
            if ch is not None:
                pairs.append((role, ch))
        for role, ch in pairs:
            if role in t.derived:
                continue        # computed from other channels, not a channel of the record
            k = a_pos.get(ch.index)
            if k is not None and not a_roles[k]:
                a_roles[k] = f"{t.label} {role}" if many and t.label else role
        for kind, chans in (("TRIP", t.trips), ("BKR", t.breakers)):
            for ch in chans:
                k = s_pos.get(ch.index)
                if k is not None and not s_roles[k]:
                    s_roles[k] = f"{t.label} {kind}" if many and t.label else kind
    return a_roles, s_roles


def find_channel(record: Record, role: str, *, label: str | None = None,
                 channel_map: Mapping[str, str] | None = None
                 ) -> AnalogChannel | StatusChannel | None:
    """Look a channel up by role: ``VA VB VC IA IB IC IN VN IP`` (analog, in SI
    units) or ``TRIP`` / ``BKR`` (the first such status channel).

    Parameters
    ----------
    record : Record
    role : str
    label : str, optional
        The terminal (circuit) when the record holds several.
    channel_map : mapping, optional
        As for :func:`map_terminals`.

    Returns
    -------
    AnalogChannel, StatusChannel or None
        None when the terminal has no channel in an optional role (IN, VN,
        IP, TRIP, BKR).

    Raises
    ------
    ChannelMapError
        No terminal, an unknown label, or several terminals and no label.
    """
    key = role.strip().upper()
    if key not in REQUIRED + OPTIONAL + ("TRIP", "BKR"):
        raise ValueError(f"unknown role {role!r}; expected one of "
                         f"{', '.join(REQUIRED + OPTIONAL)}, TRIP, BKR")
    terms = map_terminals(record, channel_map)
    if label is not None:
        terms = tuple(t for t in terms if t.label == label)
        if not terms:
            raise ChannelMapError(f"{record.source or record.station}: no terminal {label!r}")
    if len(terms) > 1:
        labels = ", ".join(t.label for t in terms)
        raise ChannelMapError(f"{record.source or record.station}: several terminals "
                              f"({labels}); name one with label=")
    t = terms[0]
    table = {"VA": t.voltages[0], "VB": t.voltages[1], "VC": t.voltages[2],
             "IA": t.currents[0], "IB": t.currents[1], "IC": t.currents[2],
             "IN": t.neutral_current, "VN": t.neutral_voltage, "IP": t.parallel_residual,
             "TRIP": t.trips[0] if t.trips else None,
             "BKR": t.breakers[0] if t.breakers else None}
    return table[key]
