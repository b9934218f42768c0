"""The materials table (docs/physics.md section 8)."""
from __future__ import annotations

import pytest

from hopscape.sim import materials


def test_every_row_has_a_source_and_the_issue_materials_are_there():
    table = materials.materials()
    for name in ("steel", "stainless_steel", "aluminium", "soda_lime_glass", "acrylic", "polycarbonate", "nylon",
                 "hdpe", "granite", "hard_gelatin", "mcc_tablet", "rubber"):
        assert name in table
    assert all(m.source.strip() for m in table.values())
    # microcrystalline-cellulose tablets: E 0.80-3.78 GPa (AAPS PharmSciTech 12:834, 2011, Table III)
    assert 0.80e9 <= table["mcc_tablet"].youngs_modulus <= 3.78e9
    assert "12:834" in table["mcc_tablet"].source


def test_unknown_name_lists_the_known_ones():
    with pytest.raises(ValueError, match=r"material must be one of steel, .*mcc_tablet.*, got 'unobtainium'"):
        materials.material("unobtainium")


def test_effective_modulus_of_like_materials():
    # Johnson 1985, ch. 4: two like solids give E* = E / (2 (1 - nu^2))
    assert materials.effective_modulus(200e9, 0.3, 200e9, 0.3) == pytest.approx(200e9 / (2 * 0.91))
    # a rigid floor leaves the body's own E / (1 - nu^2)
    assert materials.effective_modulus(3e9, 0.37, 1e30, 0.0) == pytest.approx(3e9 / (1 - 0.37 ** 2))


def test_elastic_pair_name_or_numbers():
    assert materials.elastic_pair("steel") == (2e11, 0.3)
    assert materials.elastic_pair("steel", modulus=2.1e11) == (2.1e11, 0.3)
    assert materials.elastic_pair(modulus=1e9, poisson=0.3) == (1e9, 0.3)
    with pytest.raises(ValueError, match="body_poisson must be in \\[-1, 0.5\\], got 0.7"):
        materials.elastic_pair(modulus=1e9, poisson=0.7)
    with pytest.raises(ValueError, match="floor_modulus is given without floor_poisson"):
        materials.elastic_pair(modulus=1e9, who="floor")
