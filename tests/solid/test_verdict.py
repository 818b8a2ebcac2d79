"""The verdict of a solve from plain figures (tracker.solid.verdict)."""

from tracker.solid.verdict import feeding_verdict


def _riser(freeze, contact, contraction):
    return {"riser": "R1", "freeze_s": freeze, "contact_freeze_s": contact, "contraction_end_s": contraction}


def test_ductile_iron_passes_when_the_riser_outlives_its_contact_and_the_liquid_contraction():
    # pressure control (Karsay's method, from memory; DOMAIN.md): liquid sealed behind a frozen
    # contact is expected in a rigid mould, so a sealed pocket does not fail the casting there
    ok, reasons = feeding_verdict("ductile_iron", rigid_mould=True, risers=[_riser(500, 400, 300)],
                                  unfed_hot_spots=1, isolated_share=0.2, min_niyama=None, niyama_threshold=None)
    assert ok and reasons == []


def test_ductile_iron_fails_when_the_riser_freezes_before_its_contact():
    ok, reasons = feeding_verdict("ductile_iron", rigid_mould=True, risers=[_riser(350, 400, 300)],
                                  unfed_hot_spots=0, isolated_share=0.0, min_niyama=None, niyama_threshold=None)
    # the 2-D check's rule set (tracker.thermal.pressure_control), the contact in the neck's place
    assert not ok and reasons == ["riser R1: the riser freezes before its neck"]


def test_ductile_iron_fails_when_its_contact_freezes_before_the_liquid_contraction_ends():
    ok, reasons = feeding_verdict("ductile_iron", rigid_mould=True, risers=[_riser(500, 250, 300)],
                                  unfed_hot_spots=0, isolated_share=0.0, min_niyama=None, niyama_threshold=None)
    assert not ok and reasons[0].startswith("riser R1: the neck freezes before the section's liquid contraction")


def test_ductile_iron_in_green_sand_counts_sealed_liquid():
    # a green-sand mould gives way to the graphite expansion (DOMAIN.md, third-round notes)
    ok, reasons = feeding_verdict("ductile_iron", rigid_mould=False, risers=[_riser(500, 400, 300)],
                                  unfed_hot_spots=0, isolated_share=0.1, min_niyama=None, niyama_threshold=None)
    assert not ok and "green-sand" in reasons[0]


def test_steel_fails_on_unfed_hot_spots_isolated_liquid_and_niyama():
    ok, reasons = feeding_verdict("steel", rigid_mould=False, risers=[_riser(500, 400, 300)],
                                  unfed_hot_spots=2, isolated_share=0.03, min_niyama=0.5, niyama_threshold=1.0)
    assert not ok and len(reasons) == 3
    ok, reasons = feeding_verdict("steel", rigid_mould=False, risers=[_riser(500, 400, 300)],
                                  unfed_hot_spots=0, isolated_share=0.001, min_niyama=1.5, niyama_threshold=1.0)
    assert ok and reasons == []


def test_no_riser_is_no_verdict_of_feeding():
    ok, reasons = feeding_verdict("steel", rigid_mould=False, risers=[], unfed_hot_spots=1, isolated_share=0.0,
                                  min_niyama=None, niyama_threshold=None)
    assert not ok and reasons[0].startswith("no riser given")


def test_a_riser_freezing_before_its_contact_fails_a_shrinking_alloy():
    # a riser must freeze after the section it feeds (DOMAIN.md, "Shrinkage, and what a riser feeds")
    ok, reasons = feeding_verdict("steel", rigid_mould=False, risers=[_riser(390, 400, 300)], unfed_hot_spots=0,
                                  isolated_share=0.0, min_niyama=None, niyama_threshold=None)
    assert not ok and reasons == ["riser R1 freezes at 390 s, before the casting at its contact (400 s)"]
