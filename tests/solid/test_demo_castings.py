"""The demo castings: made by the project's own code, committed up to date, and solvable."""

import pytest

from tests.support import SAMPLE
from tracker.demo.castings import castings, write_castings
from tracker.solid import stl


def test_committed_castings_are_up_to_date(tmp_path):
    made = write_castings(tmp_path)
    for name, path in made.items():
        committed = SAMPLE / "castings" / f"{name}.stl"
        assert committed.read_bytes() == path.read_bytes(), f"{committed} is stale; run python -m tracker.demo"


def test_the_bossed_plate_is_one_closed_solid_of_its_parts():
    m = stl.read(SAMPLE / "castings" / "bossed-plate.stl")
    parts = castings()
    assert len(m.bodies()) == 1
    # the union's volume: plate + two 64-gon bosses + the rib less its overlap with the bosses
    # (divergence theorem against the box and prism formulas, through trimesh)
    plate = 300 * 200 * 40 / 1000.0
    assert plate < m.volume_cm3 < plate + 2 * 110**2 * 3.1416 / 4 * 60 / 1000 + 170 * 25 * 30 / 1000.0
    risers = stl.read(SAMPLE / "castings" / "bossed-plate-risers.stl")
    assert len(risers.bodies()) == 2 and parts["tee"].is_watertight


def test_plate_riser_stands_on_the_plate():
    plate = stl.read(SAMPLE / "castings" / "plate.stl")
    riser = stl.read(SAMPLE / "castings" / "plate-riser.stl")
    assert plate.bounds_mm[1, 2] == pytest.approx(riser.bounds_mm[0, 2])
