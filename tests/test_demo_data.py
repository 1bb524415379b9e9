"""The committed demo files are exactly what the seeded generator writes."""

import importlib.util

from conftest import ROOT


def _generator():
    spec = importlib.util.spec_from_file_location("demo_generate", ROOT / "demo_data" / "generate.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def test_committed_demo_files_match_the_generator(tmp_path):
    gen = _generator()
    for written in gen.write_all(tmp_path):
        committed = ROOT / "demo_data" / written.name
        assert committed.read_bytes() == written.read_bytes(), f"{written.name} is stale: run demo_data/generate.py"


def test_demo_scenario_has_the_promised_shapes():
    gen = _generator()
    rows = gen.build_rows()
    assert len(rows) == gen.DAYS * len(gen.SHIFTS) * gen.SUBGROUPS_PER_SHIFT * gen.SUBGROUP_SIZE
    residue = [float(r["Residue [mg]"]) for r in rows]
    hardness = {float(r["Hardness [HRC]"]) for r in rows}
    assert residue.count(0.0) > 20          # a characteristic with zeros
    assert all((h * 2).is_integer() for h in hardness)  # coarse 0.5 HRC steps
    assert len(hardness) < 15
