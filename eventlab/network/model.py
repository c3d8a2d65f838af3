"""The network model: a bus-branch description of the grid around a line.

The model file is TOML (read with :mod:`tomllib`); :func:`load_model` turns it
into frozen dataclasses, :func:`model_from_dict` does the same for an already
parsed mapping (tests build models that way).  Every validation problem raises
:class:`~eventlab.errors.ModelError` with one line naming the file, the table
(``[[line]] #1 (id L1)``), the key and what was expected.

Quantities are primary SI, impedances complex [ohm]; per-unit is used only
inside the network calculations (:mod:`eventlab.network.perunit`).

The file format (see README, "Network model file"):

``[system]``
    ``name``, ``frequency_hz``, ``base_mva``.
``[[bus]]``
    ``id``, ``kv`` (nominal line-to-line voltage [kV]).
``[[source]]``
    Thevenin equivalent behind ``bus``: ``z1_ohm`` and ``z0_ohm`` as ``[R, X]``
    (optional ``z2_ohm``, default ``z1_ohm``), or ``sc_mva`` with ``x_r`` and
    ``x0_x1``; optional ``emf_pu`` (default 1.0) and ``angle_deg`` (default 0,
    relative to the reference of the source's voltage zone, see
    :func:`eventlab.network.perunit.voltage_zones`).
``[[line]]``
    ``id``, ``from``, ``to``; either ``length_km``, ``z1_ohm_per_km``,
    ``z0_ohm_per_km`` (and optional ``c1_nf_per_km`` with ``c0_nf_per_km``) or
    a list of ``[[line.section]]`` tables with those keys each; optional
    ``structures = "file.csv"`` (relative to the model file) and zero-sequence
    mutual coupling ``mutual = { line = "L2", z0m_ohm_per_km = [R, X] }``.
``[[transformer]]``
    ``id``, ``hv_bus``, ``lv_bus``, ``mva``, ``z_percent``, ``x_r``,
    ``vector_group`` (``YNd11``, ``Dyn1``, ``YNyn0`` ...); optional
    ``z0_percent`` (default ``z_percent``), neutral grounding ``z_n_ohm`` (the
    one earthed star winding) or ``z_n_hv_ohm`` / ``z_n_lv_ohm`` as ``[R, X]``.
``[[terminal]]``
    ``id``, ``line``, ``bus``, ``station``, ``channels`` (VA VB VC IA IB IC,
    optional IN and further roles, to record channel names) and
    ``ct_polarity`` (``"normal"``: current into the line positive; or
    ``"reversed"``).  Other keys are kept in ``extra``.
"""

from __future__ import annotations

import csv
import dataclasses
import math
import re
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal

from eventlab.errors import ModelError

CtPolarity = Literal["normal", "reversed"]
CT_POLARITIES: tuple[str, ...] = ("normal", "reversed")
REQUIRED_CHANNELS: tuple[str, ...] = ("VA", "VB", "VC", "IA", "IB", "IC")


@dataclass(frozen=True)
class SystemInfo:
    """``[system]``: name, nominal frequency [Hz] and the MVA base [MVA]."""

    name: str
    frequency_hz: float
    base_mva: float
    extra: Mapping[str, Any] = field(default_factory=dict, compare=False)


@dataclass(frozen=True)
class Bus:
    """A bus: ``id`` and nominal line-to-line voltage ``kv`` [kV]."""

    id: str
    kv: float


@dataclass(frozen=True)
class Source:
    """Thevenin equivalent of the grid behind a bus.

    Attributes
    ----------
    bus : str
    z1_ohm, z2_ohm, z0_ohm : complex
        Sequence impedances [ohm] at the bus voltage.
    emf_pu : float
        Magnitude of the internal EMF [pu of the bus nominal voltage].
    angle_rad : float
        EMF angle [rad] relative to the reference of the bus's voltage zone.
    """

    bus: str
    z1_ohm: complex
    z0_ohm: complex
    z2_ohm: complex
    emf_pu: float = 1.0
    angle_rad: float = 0.0


@dataclass(frozen=True)
class LineSection:
    """A homogeneous stretch of a line.

    Attributes
    ----------
    length_km : float
    z1_ohm_per_km, z0_ohm_per_km : complex
        Series impedance per length [ohm/km].
    c1_nf_per_km, c0_nf_per_km : float
        Shunt capacitance per length [nF/km] (0 = not modelled).
    """

    length_km: float
    z1_ohm_per_km: complex
    z0_ohm_per_km: complex
    c1_nf_per_km: float = 0.0
    c0_nf_per_km: float = 0.0


@dataclass(frozen=True)
class Structure:
    """A tower/pole of a line: id, distance from the ``from`` bus [km], optional position."""

    structure: str
    distance_km: float
    latitude: float | None = None
    longitude: float | None = None


@dataclass(frozen=True)
class Mutual:
    """Zero-sequence mutual coupling with a parallel line over the whole length."""

    line: str
    z0m_ohm_per_km: complex


class SectionTotals:
    """Route totals of anything with ``sections`` (a tuple of :class:`LineSection`)."""

    sections: tuple[LineSection, ...]

    @property
    def length_km(self) -> float:
        """Total route length [km]."""
        return float(sum(s.length_km for s in self.sections))

    @property
    def z1_ohm(self) -> complex:
        """Total positive-sequence series impedance [ohm]."""
        return complex(sum(s.z1_ohm_per_km * s.length_km for s in self.sections))

    @property
    def z0_ohm(self) -> complex:
        """Total zero-sequence series impedance [ohm]."""
        return complex(sum(s.z0_ohm_per_km * s.length_km for s in self.sections))


@dataclass(frozen=True)
class Line(SectionTotals):
    """A line between two buses, made of one or more sections (from ``from_bus`` on)."""

    id: str
    from_bus: str
    to_bus: str
    sections: tuple[LineSection, ...]
    structures: tuple[Structure, ...] = ()
    mutual: Mutual | None = None

    @property
    def homogeneous(self) -> bool:
        return len(self.sections) == 1

    def other_end(self, bus: str) -> str:
        return self.to_bus if bus == self.from_bus else self.from_bus


@dataclass(frozen=True)
class Transformer:
    """A two-winding transformer.

    Attributes
    ----------
    mva : float
        Rating [MVA], base of ``z_percent``.
    z_percent, z0_percent : float
        Short-circuit impedance [%] (positive and zero sequence).
    x_r : float
        X/R ratio of the short-circuit impedance.
    vector_group : str
        IEC 60076-1 symbol, e.g. ``YNd11``: HV winding, LV winding, clock number.
    z_n_hv_ohm, z_n_lv_ohm : complex
        Neutral grounding impedance of an earthed (``YN``/``yn``) star [ohm].
    """

    id: str
    hv_bus: str
    lv_bus: str
    mva: float
    z_percent: float
    x_r: float
    vector_group: str
    z0_percent: float
    z_n_hv_ohm: complex = 0j
    z_n_lv_ohm: complex = 0j

    @property
    def hv_winding(self) -> str:
        return _parse_vector_group(self.vector_group)[0]

    @property
    def lv_winding(self) -> str:
        return _parse_vector_group(self.vector_group)[1]

    @property
    def clock(self) -> int:
        """Clock number k: the LV positive-sequence voltage lags the HV one by k x 30 deg."""
        return _parse_vector_group(self.vector_group)[2]


@dataclass(frozen=True)
class Terminal:
    """A line end where a recorder measures."""

    id: str
    line: str
    bus: str
    station: str
    channels: Mapping[str, str]
    ct_polarity: CtPolarity = "normal"
    extra: Mapping[str, Any] = field(default_factory=dict, compare=False)


@dataclass(frozen=True)
class NetworkModel:
    """The whole model (frozen).  Look-ups by id via :meth:`bus`, :meth:`line` ..."""

    system: SystemInfo
    buses: tuple[Bus, ...]
    sources: tuple[Source, ...]
    lines: tuple[Line, ...]
    transformers: tuple[Transformer, ...] = ()
    terminals: tuple[Terminal, ...] = ()
    source_name: str = "<model>"
    extra: Mapping[str, Any] = field(default_factory=dict, compare=False)
    #: per-instance cache of matrices the fault position does not change
    _cache: dict = field(default_factory=dict, init=False, compare=False, repr=False)

    def bus(self, bus_id: str) -> Bus:
        for b in self.buses:
            if b.id == bus_id:
                return b
        raise ModelError(f"{self.source_name}: unknown bus {bus_id!r}; buses are "
                         f"{', '.join(b.id for b in self.buses)}")

    def line(self, line_id: str) -> Line:
        for ln in self.lines:
            if ln.id == line_id:
                return ln
        raise ModelError(f"{self.source_name}: unknown line {line_id!r}; lines are "
                         f"{', '.join(x.id for x in self.lines) or '(none)'}")

    def terminal(self, terminal_id: str) -> Terminal:
        for t in self.terminals:
            if t.id == terminal_id:
                return t
        raise ModelError(f"{self.source_name}: unknown terminal {terminal_id!r}; terminals "
                         f"are {', '.join(t.id for t in self.terminals) or '(none)'}")

    def terminals_of_line(self, line_id: str) -> tuple[Terminal, ...]:
        return tuple(t for t in self.terminals if t.line == line_id)

    def terminals_at_station(self, station: str) -> tuple[Terminal, ...]:
        """Terminals whose station matches ``station`` case-insensitively (spaces/underscores alike)."""
        key = _station_key(station)
        return tuple(t for t in self.terminals if _station_key(t.station) == key)

    def sources_at(self, bus_id: str) -> tuple[Source, ...]:
        return tuple(s for s in self.sources if s.bus == bus_id)


def _station_key(name: str) -> str:
    return re.sub(r"[\s_\-]+", " ", str(name)).strip().casefold()


# ----------------------------------------------------------------------------- variants

def without_line_capacitance(model: NetworkModel) -> NetworkModel:
    """A copy of ``model`` whose lines carry no shunt capacitance (series impedance only)."""
    return dataclasses.replace(model, lines=tuple(dataclasses.replace(ln, sections=tuple(
        dataclasses.replace(sec, c1_nf_per_km=0.0, c0_nf_per_km=0.0) for sec in ln.sections))
        for ln in model.lines))


def with_source(model: NetworkModel, bus: str, z_scale: float = 1.0,
                emf_pu: float | None = None, angle_deg: float | None = None) -> NetworkModel:
    """A copy of ``model`` with the source at ``bus`` changed.

    Parameters
    ----------
    model : NetworkModel
    bus : str
        Bus of the source (exactly one source there).
    z_scale : float
        Factor on all three sequence impedances of that source.
    emf_pu : float, optional
        New EMF magnitude [pu]; unchanged when None.
    angle_deg : float, optional
        New EMF angle [deg] relative to the bus's zone reference; unchanged when None.
    """
    found = [i for i, s in enumerate(model.sources) if s.bus == bus]
    if len(found) != 1:
        raise ModelError(f"{model.source_name}: with_source: expected exactly one source at bus "
                         f"{bus!r}, found {len(found)}")
    if not (z_scale > 0 and math.isfinite(z_scale)):
        raise ModelError(f"{model.source_name}: with_source: z_scale must be a positive number, "
                         f"got {z_scale!r}")
    s = model.sources[found[0]]
    new = dataclasses.replace(
        s,
        z1_ohm=s.z1_ohm * z_scale, z2_ohm=s.z2_ohm * z_scale, z0_ohm=s.z0_ohm * z_scale,
        emf_pu=s.emf_pu if emf_pu is None else float(emf_pu),
        angle_rad=s.angle_rad if angle_deg is None else math.radians(float(angle_deg)),
    )
    sources = list(model.sources)
    sources[found[0]] = new
    return dataclasses.replace(model, sources=tuple(sources))


# ----------------------------------------------------------------------------- loading

def load_model(path: str | Path) -> NetworkModel:
    """Read a TOML network model file.

    Parameters
    ----------
    path : str or Path
        The ``.toml`` file; structure CSV files are resolved relative to it.

    Raises
    ------
    ModelError
        One line naming the file, table, key and what was expected.
    FileNotFoundError
        When ``path`` does not exist.
    """
    p = Path(path)
    raw = p.read_bytes()
    try:
        data = tomllib.loads(raw.decode("utf-8"))
    except UnicodeDecodeError as exc:
        raise ModelError(f"{p}: not UTF-8 text ({exc.reason} at byte {exc.start})") from None
    except tomllib.TOMLDecodeError as exc:
        raise ModelError(f"{p}: not valid TOML: {exc}") from None
    return model_from_dict(data, source_name=str(p), base_dir=p.parent)


_SYSTEM_KEYS = {"name", "frequency_hz", "base_mva"}
_BUS_KEYS = {"id", "kv"}
_SOURCE_KEYS = {"bus", "z1_ohm", "z0_ohm", "z2_ohm", "sc_mva", "x_r", "x0_x1", "emf_pu",
                "angle_deg", "id"}
_SECTION_KEYS = {"length_km", "z1_ohm_per_km", "z0_ohm_per_km", "c1_nf_per_km", "c0_nf_per_km"}
_LINE_KEYS = {"id", "from", "to", "section", "structures", "mutual"} | _SECTION_KEYS
_TRAFO_KEYS = {"id", "hv_bus", "lv_bus", "mva", "z_percent", "z0_percent", "x_r",
               "vector_group", "z_n_ohm", "z_n_hv_ohm", "z_n_lv_ohm"}
_TERMINAL_KEYS = {"id", "line", "bus", "station", "channels", "ct_polarity"}
_TOP_KEYS = {"system", "bus", "source", "line", "transformer", "terminal"}


class _Ctx:
    """Where we are in the file, for error messages."""

    def __init__(self, source_name: str, table: str):
        self.source_name = source_name
        self.table = table

    def err(self, key: str | None, what: str) -> ModelError:
        k = f": key {key}" if key else ""
        return ModelError(f"{self.source_name}: {self.table}{k}: {what}")


def _is_number(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)


def _get(ctx: _Ctx, d: Mapping, key: str, kind: str, *, default: Any = ..., positive=False,
         nonnegative=False) -> Any:
    if key not in d:
        if default is ...:
            raise ctx.err(key, f"missing (expected {kind})")
        return default
    v = d[key]
    if kind == "number":
        if not _is_number(v):
            raise ctx.err(key, f"expected a number, got {v!r}")
        v = float(v)
        if positive and not v > 0:
            raise ctx.err(key, f"expected a positive number, got {v!r}")
        if nonnegative and v < 0:
            raise ctx.err(key, f"expected a number >= 0, got {v!r}")
        return v
    if kind == "string":
        if not isinstance(v, str) or not v.strip():
            raise ctx.err(key, f"expected a non-empty string, got {v!r}")
        return v.strip()
    if kind == "pair":
        if (not isinstance(v, list) or len(v) != 2 or not all(_is_number(x) for x in v)):
            raise ctx.err(key, f"expected [R, X] pair of numbers, got {v!r}")
        return complex(float(v[0]), float(v[1]))
    raise AssertionError(kind)  # pragma: no cover


def _check_keys(ctx: _Ctx, d: Any, allowed: set[str], *, keep_extra: bool = False) -> dict:
    if not isinstance(d, Mapping):
        raise ctx.err(None, f"expected a table, got {d!r}")
    extra = {k: v for k, v in d.items() if k not in allowed}
    if extra and not keep_extra:
        k = next(iter(extra))
        raise ctx.err(k, f"unknown key; expected one of {', '.join(sorted(allowed))}")
    return extra


def _table_list(ctx_name: str, data: Mapping, key: str, *, required: bool) -> list:
    v = data.get(key, [])
    if not isinstance(v, list) or not all(isinstance(x, Mapping) for x in v):
        raise ModelError(f"{ctx_name}: [[{key}]]: expected an array of tables")
    if required and not v:
        raise ModelError(f"{ctx_name}: [[{key}]]: at least one entry is required")
    return v


def model_from_dict(data: Mapping[str, Any], source_name: str = "<model>",
                    base_dir: str | Path | None = None) -> NetworkModel:
    """Build a :class:`NetworkModel` from a parsed TOML mapping.

    Parameters
    ----------
    data : mapping
        As :func:`tomllib.loads` returns it.
    source_name : str
        Name used in error messages (the file path).
    base_dir : path, optional
        Folder for relative structure CSV paths (default: the working directory).
    """
    name = source_name
    base = Path(base_dir) if base_dir is not None else Path(".")
    top_extra = {k: v for k, v in data.items() if k not in _TOP_KEYS}

    # [system]
    ctx = _Ctx(name, "[system]")
    if "system" not in data:
        raise ModelError(f"{name}: [system]: table missing (expected name, frequency_hz, base_mva)")
    sysd = data["system"]
    sys_extra = _check_keys(ctx, sysd, _SYSTEM_KEYS, keep_extra=True)
    system = SystemInfo(
        name=_get(ctx, sysd, "name", "string", default="unnamed"),
        frequency_hz=_get(ctx, sysd, "frequency_hz", "number", positive=True),
        base_mva=_get(ctx, sysd, "base_mva", "number", default=100.0, positive=True),
        extra=sys_extra,
    )

    # [[bus]]
    buses: list[Bus] = []
    for i, b in enumerate(_table_list(name, data, "bus", required=True), 1):
        ctx = _Ctx(name, f"[[bus]] #{i}" + (f" (id {b['id']})" if "id" in b else ""))
        _check_keys(ctx, b, _BUS_KEYS)
        bid = _get(ctx, b, "id", "string")
        if any(x.id == bid for x in buses):
            raise ctx.err("id", f"duplicate bus id {bid!r}")
        buses.append(Bus(id=bid, kv=_get(ctx, b, "kv", "number", positive=True)))
    bus_kv = {b.id: b.kv for b in buses}

    def bus_ref(ctx: _Ctx, d: Mapping, key: str) -> str:
        bid = _get(ctx, d, key, "string")
        if bid not in bus_kv:
            raise ctx.err(key, f"unknown bus {bid!r}; buses are {', '.join(bus_kv)}")
        return bid

    # [[source]]
    sources: list[Source] = []
    for i, s in enumerate(_table_list(name, data, "source", required=False), 1):
        ctx = _Ctx(name, f"[[source]] #{i}" + (f" (bus {s['bus']})" if "bus" in s else ""))
        _check_keys(ctx, s, _SOURCE_KEYS)
        bus = bus_ref(ctx, s, "bus")
        if "z1_ohm" in s or "z0_ohm" in s:
            if "sc_mva" in s:
                raise ctx.err("sc_mva", "give either z1_ohm/z0_ohm or sc_mva/x_r/x0_x1, not both")
            z1 = _get(ctx, s, "z1_ohm", "pair")
            z0 = _get(ctx, s, "z0_ohm", "pair")
            z2 = _get(ctx, s, "z2_ohm", "pair", default=z1)
        elif "sc_mva" in s:
            sc = _get(ctx, s, "sc_mva", "number", positive=True)
            x_r = _get(ctx, s, "x_r", "number", positive=True)
            x0_x1 = _get(ctx, s, "x0_x1", "number", positive=True)
            zmag = bus_kv[bus] ** 2 / sc
            r = zmag / math.sqrt(1.0 + x_r * x_r)
            z1 = complex(r, r * x_r)
            z2 = z1
            z0 = z1 * x0_x1
        else:
            raise ctx.err("z1_ohm", "missing impedance: expected z1_ohm and z0_ohm as [R, X] "
                          "pairs, or sc_mva with x_r and x0_x1")
        for key, z in (("z1_ohm", z1), ("z0_ohm", z0), ("z2_ohm", z2)):
            if z.real < 0 or abs(z) == 0:
                raise ctx.err(key, f"expected a non-zero impedance with R >= 0, got "
                              f"[{z.real}, {z.imag}]")
        sources.append(Source(
            bus=bus, z1_ohm=z1, z0_ohm=z0, z2_ohm=z2,
            emf_pu=_get(ctx, s, "emf_pu", "number", default=1.0, positive=True),
            angle_rad=math.radians(_get(ctx, s, "angle_deg", "number", default=0.0)),
        ))

    # [[line]]
    line_tables = _table_list(name, data, "line", required=False)
    lines: list[Line] = []
    for i, ln in enumerate(line_tables, 1):
        ctx = _Ctx(name, f"[[line]] #{i}" + (f" (id {ln['id']})" if "id" in ln else ""))
        _check_keys(ctx, ln, _LINE_KEYS)
        lid = _get(ctx, ln, "id", "string")
        if any(x.id == lid for x in lines):
            raise ctx.err("id", f"duplicate line id {lid!r}")
        fb = bus_ref(ctx, ln, "from")
        tb = bus_ref(ctx, ln, "to")
        if fb == tb:
            raise ctx.err("to", f"a line needs two different buses, got {fb!r} twice")
        if bus_kv[fb] != bus_kv[tb]:
            raise ctx.err("to", f"line joins buses of different kV ({fb} {bus_kv[fb]} kV, "
                          f"{tb} {bus_kv[tb]} kV); use a [[transformer]]")
        if "section" in ln:
            if any(k in ln for k in _SECTION_KEYS):
                k = next(k for k in _SECTION_KEYS if k in ln)
                raise ctx.err(k, "give either [[line.section]] tables or length_km and "
                              "impedances on the line, not both")
            secs = ln["section"]
            if not isinstance(secs, list) or not secs or not all(isinstance(x, Mapping)
                                                                   for x in secs):
                raise ctx.err("section", "expected one or more [[line.section]] tables")
            sections = tuple(_section(_Ctx(name, f"{ctx.table} [[line.section]] #{j}"), sd)
                             for j, sd in enumerate(secs, 1))
        else:
            sections = (_section(ctx, ln, check_keys=False),)
        mutual = None
        if "mutual" in ln:
            mctx = _Ctx(name, f"{ctx.table} mutual")
            md = ln["mutual"]
            _check_keys(mctx, md, {"line", "z0m_ohm_per_km"})
            mutual = Mutual(line=_get(mctx, md, "line", "string"),
                            z0m_ohm_per_km=_get(mctx, md, "z0m_ohm_per_km", "pair"))
        structures: tuple[Structure, ...] = ()
        if "structures" in ln:
            rel = _get(ctx, ln, "structures", "string")
            structures = read_structures(base / rel, line_length_km=sum(
                s.length_km for s in sections))
        lines.append(Line(id=lid, from_bus=fb, to_bus=tb, sections=sections,
                          structures=structures, mutual=mutual))
    by_id = {ln.id: ln for ln in lines}
    for i, ln in enumerate(lines, 1):
        if ln.mutual is None:
            continue
        ctx = _Ctx(name, f"[[line]] #{i} (id {ln.id}) mutual")
        other = by_id.get(ln.mutual.line)
        if other is None or other.id == ln.id:
            raise ctx.err("line", f"unknown parallel line {ln.mutual.line!r}")
        if {other.from_bus, other.to_bus} != {ln.from_bus, ln.to_bus}:
            raise ctx.err("line", f"mutual coupling is modelled only between lines joining the "
                          f"same two buses; {ln.id} and {other.id} do not")
        if not (ln.homogeneous and other.homogeneous) or abs(
                ln.length_km - other.length_km) > 1e-9 * max(1.0, ln.length_km):
            raise ctx.err("line", "mutual coupling is modelled only between single-section "
                          "lines of equal length")
        if other.mutual is not None and (other.mutual.line != ln.id or abs(
                other.mutual.z0m_ohm_per_km - ln.mutual.z0m_ohm_per_km) > 1e-12):
            raise ctx.err("line", f"line {other.id} declares a different mutual coupling")
    # one declaration per pair is enough: make it symmetric
    lines = [dataclasses.replace(ln, mutual=Mutual(line=o.id, z0m_ohm_per_km=o.mutual.z0m_ohm_per_km))
             if ln.mutual is None and (o := next((x for x in lines if x.mutual is not None
                                                   and x.mutual.line == ln.id), None)) is not None
             else ln for ln in lines]

    # [[transformer]]
    transformers: list[Transformer] = []
    for i, t in enumerate(_table_list(name, data, "transformer", required=False), 1):
        ctx = _Ctx(name, f"[[transformer]] #{i}" + (f" (id {t['id']})" if "id" in t else ""))
        _check_keys(ctx, t, _TRAFO_KEYS)
        tid = _get(ctx, t, "id", "string")
        hv = bus_ref(ctx, t, "hv_bus")
        lv = bus_ref(ctx, t, "lv_bus")
        if hv == lv:
            raise ctx.err("lv_bus", "a transformer needs two different buses")
        vg = _get(ctx, t, "vector_group", "string")
        try:
            hw, lw, _k = _parse_vector_group(vg)
        except ValueError as exc:
            raise ctx.err("vector_group", str(exc)) from None
        zn_hv = zn_lv = 0j
        if "z_n_ohm" in t:
            if "z_n_hv_ohm" in t or "z_n_lv_ohm" in t:
                raise ctx.err("z_n_ohm", "give z_n_ohm or z_n_hv_ohm/z_n_lv_ohm, not both")
            zn = _get(ctx, t, "z_n_ohm", "pair")
            earthed = [w for w in (hw, lw) if w == "YN"]
            if len(earthed) != 1:
                raise ctx.err("z_n_ohm", f"z_n_ohm needs exactly one earthed star (YN/yn) "
                              f"winding, {vg} has {len(earthed)}; use z_n_hv_ohm/z_n_lv_ohm")
            if hw == "YN":
                zn_hv = zn
            else:
                zn_lv = zn
        zn_hv = _get(ctx, t, "z_n_hv_ohm", "pair", default=zn_hv)
        zn_lv = _get(ctx, t, "z_n_lv_ohm", "pair", default=zn_lv)
        zp = _get(ctx, t, "z_percent", "number", positive=True)
        transformers.append(Transformer(
            id=tid, hv_bus=hv, lv_bus=lv,
            mva=_get(ctx, t, "mva", "number", positive=True),
            z_percent=zp,
            x_r=_get(ctx, t, "x_r", "number", positive=True),
            vector_group=vg,
            z0_percent=_get(ctx, t, "z0_percent", "number", default=zp, positive=True),
            z_n_hv_ohm=zn_hv, z_n_lv_ohm=zn_lv,
        ))

    # [[terminal]]
    terminals: list[Terminal] = []
    for i, t in enumerate(_table_list(name, data, "terminal", required=False), 1):
        ctx = _Ctx(name, f"[[terminal]] #{i}" + (f" (id {t['id']})" if "id" in t else ""))
        extra = _check_keys(ctx, t, _TERMINAL_KEYS, keep_extra=True)
        tid = _get(ctx, t, "id", "string")
        if any(x.id == tid for x in terminals):
            raise ctx.err("id", f"duplicate terminal id {tid!r}")
        lid = _get(ctx, t, "line", "string")
        if lid not in by_id:
            raise ctx.err("line", f"unknown line {lid!r}; lines are {', '.join(by_id) or '(none)'}")
        bus = bus_ref(ctx, t, "bus")
        if bus not in (by_id[lid].from_bus, by_id[lid].to_bus):
            raise ctx.err("bus", f"bus {bus!r} is not an end of line {lid} "
                          f"({by_id[lid].from_bus}, {by_id[lid].to_bus})")
        ch = t.get("channels", {})
        if not isinstance(ch, Mapping) or not all(isinstance(v, str) for v in ch.values()):
            raise ctx.err("channels", f"expected a table of role = \"channel name\", got {ch!r}")
        channels = {str(k).upper(): v for k, v in ch.items()}
        pol = t.get("ct_polarity", "normal")
        if pol not in CT_POLARITIES:
            raise ctx.err("ct_polarity", f"expected one of {', '.join(CT_POLARITIES)}, got {pol!r}")
        terminals.append(Terminal(id=tid, line=lid, bus=bus,
                                  station=_get(ctx, t, "station", "string", default=bus),
                                  channels=channels, ct_polarity=pol, extra=extra))

    return NetworkModel(system=system, buses=tuple(buses), sources=tuple(sources),
                        lines=tuple(lines), transformers=tuple(transformers),
                        terminals=tuple(terminals), source_name=name, extra=top_extra)


def _section(ctx: _Ctx, d: Mapping, check_keys: bool = True) -> LineSection:
    if check_keys:
        _check_keys(ctx, d, _SECTION_KEYS)
    length = _get(ctx, d, "length_km", "number")
    if not length > 0:
        raise ctx.err("length_km", f"expected a positive length [km], got {length!r}")
    z1 = _get(ctx, d, "z1_ohm_per_km", "pair")
    z0 = _get(ctx, d, "z0_ohm_per_km", "pair")
    for key, z in (("z1_ohm_per_km", z1), ("z0_ohm_per_km", z0)):
        if z.real < 0 or z.imag <= 0:
            raise ctx.err(key, f"expected R >= 0 and X > 0, got [{z.real}, {z.imag}]")
    c1 = _get(ctx, d, "c1_nf_per_km", "number", default=None, nonnegative=True)
    c0 = _get(ctx, d, "c0_nf_per_km", "number", default=None, nonnegative=True)
    if (c1 is None) != (c0 is None):
        k = "c0_nf_per_km" if c0 is None else "c1_nf_per_km"
        raise ctx.err(k, "missing: shunt capacitance needs both c1_nf_per_km and c0_nf_per_km")
    return LineSection(length_km=length, z1_ohm_per_km=z1, z0_ohm_per_km=z0,
                       c1_nf_per_km=c1 or 0.0, c0_nf_per_km=c0 or 0.0)


_VG_RE = re.compile(r"^(YN|Y|D)(yn|y|d)(\d{1,2})$")


def _parse_vector_group(vg: str) -> tuple[str, str, int]:
    """``"YNd11"`` -> ``("YN", "D", 11)`` (windings upper-cased)."""
    m = _VG_RE.match(vg.strip())
    if not m:
        raise ValueError(f"expected a vector group like YNd11, Dyn1, YNyn0 or Yd1 "
                         f"(HV YN/Y/D, LV yn/y/d, clock 0-11), got {vg!r}")
    k = int(m.group(3))
    hw, lw = m.group(1), m.group(2).upper()
    if k > 11:
        raise ValueError(f"clock number must be 0..11, got {k} in {vg!r}")
    star_hv, star_lv = hw != "D", lw != "D"
    if (star_hv == star_lv) != (k % 2 == 0):
        raise ValueError(f"{vg!r}: {'an odd' if star_hv == star_lv else 'an even'} clock number "
                         f"is not possible for a {hw}{lw.lower()} connection")
    return hw, lw, k


def read_structures(path: str | Path, line_length_km: float | None = None) -> tuple[Structure, ...]:
    """Read a structure list (CSV: ``structure,distance_km[,latitude,longitude]``, header row).

    Distances are cumulative from the line's ``from`` bus [km] and must not decrease.
    """
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise ModelError(f"{p}: structure list not found") from None
    rows = list(csv.reader(text.splitlines()))
    if not rows:
        raise ModelError(f"{p}: line 1: empty structure list (expected header "
                         f"structure,distance_km[,latitude,longitude])")
    header = [h.strip().lower() for h in rows[0]]
    if "structure" not in header or "distance_km" not in header:
        raise ModelError(f"{p}: line 1: header must name structure and distance_km, got "
                         f"{','.join(rows[0])}")
    col = {h: header.index(h) for h in ("structure", "distance_km", "latitude", "longitude")
           if h in header}
    out: list[Structure] = []
    last = -math.inf
    for n, row in enumerate(rows[1:], 2):
        if not row or all(not c.strip() for c in row):
            continue

        def cell(h: str, row=row) -> str:
            i = col.get(h)
            return row[i].strip() if i is not None and i < len(row) else ""

        def num(h: str, required: bool, n=n) -> float | None:
            s = cell(h)
            if not s:
                if required:
                    raise ModelError(f"{p}: line {n}: field {h}: missing (expected a number)")
                return None
            try:
                v = float(s)
            except ValueError:
                raise ModelError(f"{p}: line {n}: field {h}: expected a number, got {s!r}") from None
            if not math.isfinite(v):
                raise ModelError(f"{p}: line {n}: field {h}: expected a finite number, got {s!r}")
            return v

        sid = cell("structure")
        if not sid:
            raise ModelError(f"{p}: line {n}: field structure: missing")
        d = num("distance_km", True)
        if d < 0 or d < last:
            raise ModelError(f"{p}: line {n}: field distance_km: expected cumulative distances "
                             f">= 0 that do not decrease, got {d} after {last}")
        if line_length_km is not None and d > line_length_km * (1 + 1e-6) + 1e-6:
            raise ModelError(f"{p}: line {n}: field distance_km: {d} km is beyond the line "
                             f"length {line_length_km} km")
        last = d
        out.append(Structure(structure=sid, distance_km=d, latitude=num("latitude", False),
                             longitude=num("longitude", False)))
    return tuple(out)
