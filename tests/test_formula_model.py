"""One formula model: cage size, inner cluster and the cluster's formal charge, settable."""

from __future__ import annotations

import pytest

from cageprint.errors import FormulaError
from cageprint.formula import cage_charge, parse_cage_formula, parse_formula
from cageprint.session import Session
from cageprint.techniques import mass


@pytest.mark.parametrize(("formula", "cluster", "charge"), [
    # the ionic model of endohedral fullerenes (from memory; e.g. Popov, Yang & Dunsch,
    # Chem. Rev. 2013): M3N -> 6 electrons, M2C2 -> 4, M2S -> 4, a trivalent metal alone -> 3,
    # a divalent one -> 2
    ("Sc3N@C80", "Sc3N", 6),
    ("Lu3N@C80", "Lu3N", 6),
    ("Y2C2@C82", "Y2C2", 4),
    ("Sc2S@C82", "Sc2S", 4),
    ("La@C82", "La", 3),
    ("Gd@C82", "Gd", 3),
    ("Ca@C82", "Ca", 2),
    ("Sm@C82", "Sm", 2),
    ("Tm@C82", "Tm", 2),
    ("C60", "", 0),
])
def test_cluster_charge_and_cage_charge(formula, cluster, charge):
    f = parse_formula(formula)
    assert (f.cluster, f.cluster_charge, f.cage_charge) == (cluster, charge, -charge)
    assert cage_charge(formula) == -charge
    assert mass.cage_charge(formula) == -charge          # the mass module uses the same model
    assert Session(formula).cage_charge == -charge       # and so does the session


def test_cluster_charge_is_settable_and_cages_are_checked():
    assert parse_formula("Sc3C2@C80", cluster_charge=6).cage_charge == -6
    assert Session("Sc3N@C80", cage_charge=-4).cage_charge == -4
    f = parse_cage_formula("Sc3N@C80")
    assert (f.cage_n, f.text) == (80, "Sc3N@C80")
    with pytest.raises(FormulaError, match="nothing outside the cage"):
        parse_cage_formula("C60O")
    with pytest.raises(FormulaError, match="a fullerene cage has an even number of carbons"):
        parse_cage_formula("C22")
