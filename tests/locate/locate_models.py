"""Models the locate tests share, built in memory with the network layer's own reader."""

from __future__ import annotations

from eventlab.network.model import NetworkModel, model_from_dict


def two_source_model(*, load_angle_deg: float = 0.0, remote_z_scale: float = 1.0,
                     homogeneous: bool = False, sections: bool = False,
                     structures_csv: str | None = None) -> NetworkModel:
    """A 230 kV, 100 km line between two sources (made-up data, VELLMOOR - CARDON REACH).

    ``homogeneous`` gives every impedance of the network one angle (sources and
    line, both sequences), the case where Takagi's assumption holds exactly.
    """
    if homogeneous:
        zl1, zl0 = [0.035, 0.40], [0.10, 1.1428571428571428]  # both at atan(0.4/0.035)
        zs1, zs0 = [0.7, 8.0], [1.05, 12.0]
        zr1, zr0 = [1.4, 16.0], [2.1, 24.0]
    else:
        zl1, zl0 = [0.030, 0.38], [0.26, 1.15]
        zs1, zs0 = [0.9, 9.5], [1.6, 14.0]
        zr1, zr0 = [2.5, 22.0], [3.5, 30.0]
    zr1 = [x * remote_z_scale for x in zr1]
    zr0 = [x * remote_z_scale for x in zr0]
    line = {"id": "L1", "from": "VELLMOOR", "to": "CARDON_REACH"}
    if sections:
        line["section"] = [
            {"length_km": 30.0, "z1_ohm_per_km": zl1, "z0_ohm_per_km": zl0},
            {"length_km": 15.0, "z1_ohm_per_km": [0.06, 0.12], "z0_ohm_per_km": [0.3, 0.08 + 0.2]},
            {"length_km": 55.0, "z1_ohm_per_km": [0.025, 0.33], "z0_ohm_per_km": [0.22, 1.05]},
        ]
    else:
        line.update(length_km=100.0, z1_ohm_per_km=zl1, z0_ohm_per_km=zl0)
    if structures_csv:
        line["structures"] = structures_csv
    return _network(line, [
        {"bus": "VELLMOOR", "z1_ohm": zs1, "z0_ohm": zs0, "emf_pu": 1.02,
         "angle_deg": load_angle_deg},
        {"bus": "CARDON_REACH", "z1_ohm": zr1, "z0_ohm": zr0, "emf_pu": 1.0},
    ], "<two_source_model>")


def radial_model(*, sections: bool = False) -> NetworkModel:
    """A 230 kV, 180 km line with capacitance fed from VELLMOOR only (made-up data).

    CARDON REACH has nothing behind it: the line's far end is open, the network of
    the stage of a fault after that end's breaker opened.
    """
    line = {"id": "L1", "from": "VELLMOOR", "to": "CARDON_REACH"}
    if sections:
        line["section"] = [
            {"length_km": 60.0, "z1_ohm_per_km": [0.030, 0.38], "z0_ohm_per_km": [0.26, 1.15],
             "c1_nf_per_km": 9.5, "c0_nf_per_km": 6.0},
            {"length_km": 12.0, "z1_ohm_per_km": [0.05, 0.13], "z0_ohm_per_km": [0.3, 0.1],
             "c1_nf_per_km": 250.0, "c0_nf_per_km": 250.0},
            {"length_km": 108.0, "z1_ohm_per_km": [0.025, 0.33], "z0_ohm_per_km": [0.22, 1.05],
             "c1_nf_per_km": 11.0, "c0_nf_per_km": 7.0},
        ]
    else:
        line.update(length_km=180.0, z1_ohm_per_km=[0.030, 0.38],
                    z0_ohm_per_km=[0.26, 1.15], c1_nf_per_km=9.0, c0_nf_per_km=6.0)
    return _network(line, [{"bus": "VELLMOOR", "z1_ohm": [0.9, 9.5], "z0_ohm": [1.6, 14.0],
                            "emf_pu": 1.02}], "<radial_model>")


def _network(line: dict, sources: list[dict], name: str) -> NetworkModel:
    """VELLMOOR - CARDON REACH at 230 kV with ``line`` as L1 and these sources."""
    data = {
        "system": {"name": "Northmarch test", "frequency_hz": 60.0, "base_mva": 100.0},
        "bus": [{"id": "VELLMOOR", "kv": 230.0}, {"id": "CARDON_REACH", "kv": 230.0}],
        "source": sources,
        "line": [line],
        "terminal": [
            {"id": "VM-L1", "line": "L1", "bus": "VELLMOOR", "station": "VELLMOOR"},
            {"id": "CR-L1", "line": "L1", "bus": "CARDON_REACH", "station": "CARDON REACH"},
        ],
    }
    return model_from_dict(data, source_name=name)
