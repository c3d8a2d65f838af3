"""Model file loading and validation."""

from pathlib import Path

import pytest

from eventlab.errors import ModelError
from eventlab.network.model import load_model, model_from_dict, with_source

ROOT = Path(__file__).resolve().parents[2]
EXAMPLE = ROOT / "models" / "example_230kv.toml"


def test_issue_example_loads_as_written():
    m = load_model(EXAMPLE)
    assert m.system.frequency_hz == 60.0 and m.system.base_mva == 100.0
    assert [b.id for b in m.buses] == ["WEST", "EAST"]
    ln = m.line("L1")
    assert (ln.from_bus, ln.to_bus, ln.length_km) == ("WEST", "EAST", 80.0)
    assert ln.z1_ohm == pytest.approx(80 * (0.030 + 0.350j))
    assert m.sources[1].z0_ohm == 4.5 + 45.0j
    t = m.terminal("WEST-L1")
    assert t.channels["IA"] == "IA" and t.ct_polarity == "normal"


def _base():
    return {
        "system": {"name": "t", "frequency_hz": 50.0, "base_mva": 100.0},
        "bus": [{"id": "A", "kv": 110.0}, {"id": "B", "kv": 110.0}],
        "source": [{"bus": "A", "z1_ohm": [1.0, 10.0], "z0_ohm": [2.0, 20.0]}],
        "line": [{"id": "L", "from": "A", "to": "B", "length_km": 10.0,
                  "z1_ohm_per_km": [0.1, 0.4], "z0_ohm_per_km": [0.3, 1.2]}],
    }


@pytest.mark.parametrize("mutate, expect", [
    (lambda d: d["line"][0].update({"to": "Z"}), "[[line]] #1 (id L): key to: unknown bus 'Z'"),
    (lambda d: d["line"][0].update({"z1_ohm_per_km": 0.35}),
     "[[line]] #1 (id L): key z1_ohm_per_km: expected [R, X] pair of numbers, got 0.35"),
    (lambda d: d["line"][0].update({"length_km": -3.0}), "key length_km: expected a positive"),
    (lambda d: d["line"][0].pop("z0_ohm_per_km"), "key z0_ohm_per_km: missing"),
    (lambda d: d["source"][0].pop("z1_ohm") and d["source"][0].pop("z0_ohm"),
     "[[source]] #1 (bus A): key z1_ohm: missing impedance"),
    (lambda d: d["bus"][1].update({"kv": "110"}), "[[bus]] #2 (id B): key kv: expected a number"),
    (lambda d: d["line"][0].update({"z1_ohm_per_kn": [1, 2]}), "key z1_ohm_per_kn: unknown key"),
])
def test_validation_names_file_table_and_key(mutate, expect):
    d = _base()
    mutate(d)
    with pytest.raises(ModelError) as exc:
        model_from_dict(d, source_name="net.toml")
    msg = str(exc.value)
    assert msg.startswith("net.toml: ") and expect in msg and "\n" not in msg


def test_sections_structures_and_sc_mva(tmp_path):
    (tmp_path / "s.csv").write_text("structure,distance_km,latitude,longitude\n"
                                    "T1,0.0,1.0,2.0\nT2,4.5,,\nT3,12.0,1.1,2.1\n")
    (tmp_path / "m.toml").write_text(
        '[system]\nname="x"\nfrequency_hz=50.0\nbase_mva=100.0\n'
        '[[bus]]\nid="A"\nkv=132.0\n[[bus]]\nid="B"\nkv=132.0\n'
        '[[source]]\nbus="A"\nsc_mva=2000.0\nx_r=10.0\nx0_x1=1.5\n'
        '[[line]]\nid="L"\nfrom="A"\nto="B"\nstructures="s.csv"\n'
        '[[line.section]]\nlength_km=10.0\nz1_ohm_per_km=[0.1,0.4]\nz0_ohm_per_km=[0.3,1.2]\n'
        '[[line.section]]\nlength_km=2.0\nz1_ohm_per_km=[0.05,0.12]\nz0_ohm_per_km=[0.4,0.2]\n'
        'c1_nf_per_km=250.0\nc0_nf_per_km=250.0\n')
    m = load_model(tmp_path / "m.toml")
    ln = m.line("L")
    assert ln.length_km == 12.0 and len(ln.sections) == 2
    assert [s.structure for s in ln.structures] == ["T1", "T2", "T3"]
    assert ln.structures[1].latitude is None
    # |Z1| = kV^2 / S_sc (common practice, no source)
    assert abs(m.sources[0].z1_ohm) == pytest.approx(132.0**2 / 2000.0)
    assert m.sources[0].z1_ohm.imag / m.sources[0].z1_ohm.real == pytest.approx(10.0)


def test_bad_structure_row_names_line(tmp_path):
    d = _base()
    (tmp_path / "s.csv").write_text("structure,distance_km\nT1,0\nT2,abc\n")
    d["line"][0]["structures"] = "s.csv"
    with pytest.raises(ModelError, match=r"s.csv: line 3: field distance_km: expected a number"):
        model_from_dict(d, source_name="m.toml", base_dir=tmp_path)


def test_with_source_scales_and_keeps_original():
    m = load_model(EXAMPLE)
    m2 = with_source(m, "EAST", z_scale=2.0, emf_pu=1.05, angle_deg=-10.0)
    assert m2.sources[1].z1_ohm == 2 * m.sources[1].z1_ohm
    assert m2.sources[1].emf_pu == 1.05 and m.sources[1].emf_pu == 1.0
    with pytest.raises(ModelError, match="exactly one source at bus 'NOPE'"):
        with_source(m, "NOPE")


def test_toml_syntax_error_is_one_line(tmp_path):
    p = tmp_path / "bad.toml"
    p.write_text("[system]\nname = \n")
    with pytest.raises(ModelError) as exc:
        load_model(p)
    assert str(exc.value).startswith(f"{p}: not valid TOML") and "\n" not in str(exc.value)


def test_terminal_bus_must_be_a_line_end():
    d = _base()
    d["terminal"] = [{"id": "T", "line": "L", "bus": "C"}]
    d["bus"].append({"id": "C", "kv": 110.0})
    with pytest.raises(ModelError, match=r"\[\[terminal\]\] #1 \(id T\): key bus: bus 'C' is not "
                       r"an end of line L"):
        model_from_dict(d, source_name="m.toml")


def test_vector_group_checked():
    d = _base()
    d["bus"].append({"id": "C", "kv": 20.0})
    d["transformer"] = [{"id": "T", "hv_bus": "B", "lv_bus": "C", "mva": 10.0,
                         "z_percent": 8.0, "x_r": 10.0, "vector_group": "YNd12"}]
    with pytest.raises(ModelError, match="key vector_group: .*clock number must be 0..11"):
        model_from_dict(d, source_name="m.toml")
    d["transformer"][0]["vector_group"] = "YNd2"
    with pytest.raises(ModelError, match="an even clock number is not possible"):
        model_from_dict(d, source_name="m.toml")
