"""Isotope table, formula parsing, envelopes, ion m/z and the 13C fit."""

from __future__ import annotations

import math

import numpy as np
import pytest

from cageprint.errors import FormulaError
from cageprint.formula import KNOWN_ELEMENTS, parse_formula
from cageprint.isotopes import (
    C13_NATURAL,
    ELECTRON_MASS,
    ISOTOPES,
    average_mass,
    envelope_profile,
    fit_c13,
    ion_mz,
    isotope_envelope,
    monoisotopic_mass,
    neutral_mass,
)

ORACLE_FORMULAS = [  # ours, molmass spelling
    ("C60", "C60"),
    ("C70", "C70"),
    ("C84", "C84"),
    ("La@C82", "LaC82"),
    ("Sc3N@C80", "Sc3NC80"),
]

# ----------------------------------------------------------------- the table itself


@pytest.mark.parametrize("element", sorted(ISOTOPES))
def test_abundances_sum_to_one(element):
    # IUPAC/CIAAW 2013 representative compositions (Meija et al., Pure Appl. Chem. 88, 293,
    # 2016) are normalised: atom fractions of each element sum to 1
    total = sum(f for _, _, f in ISOTOPES[element])
    assert math.isclose(total, 1.0, abs_tol=1e-9)


@pytest.mark.parametrize("element", sorted(ISOTOPES))
def test_masses_near_nominal_and_sorted(element):
    # common practice, no source: atomic masses lie within 0.1 u of the mass number
    # (AME2020 values for these light and lanthanide nuclides), isotopes listed by mass number
    iso = ISOTOPES[element]
    assert [a for a, _, _ in iso] == sorted(a for a, _, _ in iso)
    for a, m, f in iso:
        assert abs(m - a) < 0.1
        assert 0 < f <= 1


def test_table_covers_the_endohedral_metals():
    # brief of issue 5: at least Sc, Y, La, Ce, Gd, Lu, Er, Ti, Ca plus H, C, N, O, S
    for e in ("H", "C", "N", "O", "S", "Sc", "Y", "La", "Ce", "Gd", "Lu", "Er", "Ti", "Ca"):
        assert e in ISOTOPES
    assert set(KNOWN_ELEMENTS) == set(ISOTOPES)


def test_carbon_13_natural_abundance():
    # IUPAC/CIAAW representative 13C atom fraction 0.0107 (Meija et al. 2016); 12C mass 12
    # exactly by definition of the unified atomic mass unit
    assert C13_NATURAL == 0.0107
    assert ISOTOPES["C"][1][2] == 0.0107
    assert ISOTOPES["C"][0][1] == 12.0


def test_electron_mass_codata_2018():
    # CODATA 2018 electron relative atomic mass 5.48579909065e-4
    assert ELECTRON_MASS == 5.48579909065e-4


def test_table_agrees_with_molmass():
    # molmass (test dependency, NIST tables) as an independent check of the typed-in values:
    # masses within 1e-6 u, fractions within 1e-4
    molmass = pytest.importorskip("molmass")
    for e, iso in ISOTOPES.items():
        theirs = molmass.ELEMENTS[e].isotopes
        for a, m, f in iso:
            assert abs(theirs[a].mass - m) < 1e-6, (e, a)
            assert abs(theirs[a].abundance - f) < 1e-4, (e, a)


# ----------------------------------------------------------------- formulas


@pytest.mark.parametrize(
    "text, counts, inner, cage_n, canonical",
    [
        ("C60", {"C": 60}, {}, 60, "C60"),
        ("C60O", {"C": 60, "O": 1}, {}, 60, "C60O"),
        ("C60O2", {"C": 60, "O": 2}, {}, 60, "C60O2"),
        ("C70H2", {"C": 70, "H": 2}, {}, 70, "C70H2"),
        ("C59N", {"C": 59, "N": 1}, {}, 59, "C59N"),
        ("La@C82", {"La": 1, "C": 82}, {"La": 1}, 82, "La@C82"),
        ("Sc3N@C80", {"Sc": 3, "N": 1, "C": 80}, {"Sc": 3, "N": 1}, 80, "Sc3N@C80"),
        ("Y2C2@C82", {"Y": 2, "C": 84}, {"Y": 2, "C": 2}, 82, "Y2C2@C82"),
        ("Gd@C82", {"Gd": 1, "C": 82}, {"Gd": 1}, 82, "Gd@C82"),
        ("NSc3@C80", {"Sc": 3, "N": 1, "C": 80}, {"Sc": 3, "N": 1}, 80, "Sc3N@C80"),
        ("OC60", {"C": 60, "O": 1}, {}, 60, "C60O"),
    ],
)
def test_parse_formula(text, counts, inner, cage_n, canonical):
    # common practice, no source: element counts and the INNER@CAGE convention
    f = parse_formula(text)
    assert f.counts == counts
    assert dict(f.inner) == inner
    assert f.cage_n == cage_n
    assert f.text == canonical
    assert parse_formula(canonical) == f


@pytest.mark.parametrize(
    "text, match",
    [
        ("Xx60", r"unknown element 'Xx' at character 1"),
        ("C60Q", r"unknown element 'Q' at character 4"),
        ("C60-", r"unexpected '-' at character 4"),
        ("@C82", r"empty part at character 1"),
        ("La@@C82", r"more than one '@'"),
        ("La@C82@C90", r"more than one '@'"),
        ("La@N", r"no carbon"),
        ("C0", r"count 0 for 'C'"),
        ("", r"formula is empty"),
        ("c60", r"unexpected 'c' at character 1"),
    ],
)
def test_bad_formulas(text, match):
    with pytest.raises(FormulaError, match=match):
        parse_formula(text)


def test_formula_type_checked():
    with pytest.raises(FormulaError, match=r"formula must be a string such as 'C60', got int"):
        parse_formula(60)


# ----------------------------------------------------------------- masses and ions


def test_monoisotopic_masses_of_c60_and_c70():
    # common practice, no source: 12C defines the unit, so C60 is 720 u and C70 840 u exactly
    assert monoisotopic_mass("C60") == 720.0
    assert monoisotopic_mass("C70") == 840.0
    env = isotope_envelope("C60")
    assert env.mz[0] == 720.0


def test_c60_cation_and_dication_mz():
    # common practice, no source: a radical cation lacks one electron, m/z = 720 - m_e;
    # the dication is at (720 - 2 m_e) / 2 (CODATA 2018 electron mass)
    assert ion_mz(720.0, 1) == 720.0 - ELECTRON_MASS
    assert ion_mz(720.0, 2) == (720.0 - 2 * ELECTRON_MASS) / 2
    assert isotope_envelope("C60", 2).mz[0] == pytest.approx((720.0 - 2 * ELECTRON_MASS) / 2,
                                                             abs=1e-12)
    assert isotope_envelope("C60", -1).mz[0] == pytest.approx(720.0 + ELECTRON_MASS, abs=1e-12)
    assert abs(isotope_envelope("C60", 2).mz[0] - 360.0) < 1e-3


@pytest.mark.parametrize("z", [-4, -3, -2, -1, 1, 2, 3, 4])
def test_neutral_mass_inverts_ion_mz(z):
    # common practice, no source: round trip mass -> m/z -> mass
    assert neutral_mass(ion_mz(1108.870799, z), z) == pytest.approx(1108.870799, abs=1e-9)


@pytest.mark.parametrize(
    "charge, match",
    [
        (0, r"charge 0: a neutral species has no m/z"),
        (5, r"charge 5 is outside -4\.\.\+4"),
        (1.5, r"charge must be an integer, got 1\.5"),
        ("x", r"charge must be an integer, got 'x'"),
    ],
)
def test_bad_charges(charge, match):
    with pytest.raises(FormulaError, match=match):
        ion_mz(720.0, charge)


def test_bad_c13():
    with pytest.raises(FormulaError, match=r"c13 must be an atom fraction in \[0, 1\], got 1\.5"):
        isotope_envelope("C60", c13=1.5)


def test_average_mass_c60():
    # from memory (and libraries.md B): C60 average mass with p13C = 0.0107 is 720.644 u;
    # analytically 60 * (12 + 0.0107 * 1.00335483507)
    assert average_mass("C60") == pytest.approx(60 * (12 + 0.0107 * 1.00335483507), abs=1e-9)


# ----------------------------------------------------------------- envelopes


def test_c60_binomial_ratios():
    # binomial model (common practice, no source): P(k) = C(n,k) p^k (1-p)^(n-k);
    # M+1/M = n p / q and M+2/M = n (n-1) / 2 (p/q)^2 with n = 60, p = 0.0107
    p, q, n = 0.0107, 0.9893, 60
    a = isotope_envelope("C60").abundance
    assert a[1] / a[0] == pytest.approx(n * p / q, rel=1e-12)
    assert a[2] / a[0] == pytest.approx(n * (n - 1) / 2 * (p / q) ** 2, rel=1e-12)
    assert a[0] == pytest.approx(q**n, rel=1e-12)
    # libraries.md B quotes M..M+3 = 52.442, 34.032, 10.858, 2.271 % of the total
    assert np.round(100 * a[:4], 3).tolist() == [52.442, 34.032, 10.858, 2.271]


@pytest.mark.parametrize("ours, theirs", ORACLE_FORMULAS)
def test_envelopes_agree_with_molmass(ours, theirs):
    # molmass (test-only oracle) uses 13C = 0.0107 like the kit, so no adjustment is needed;
    # agreement to 1e-6 in relative abundance and 1e-6 u in mass (issue 5)
    molmass = pytest.importorskip("molmass")
    spec = molmass.Formula(theirs).spectrum()
    env = isotope_envelope(ours, threshold=1e-12)
    rel = env.relative
    for nominal, mass, r, frac in zip(env.nominal, env.mz, rel, env.abundance, strict=False):
        if frac < 1e-9:
            continue
        entry = spec[int(nominal)]
        assert abs(entry.intensity / 100.0 - r) < 1e-6
        assert abs(entry.fraction - frac) < 1e-6
        assert abs(entry.mass - mass) < 1e-6


@pytest.mark.parametrize("ours, theirs", [("C60", "[C60]+"), ("La@C82", "[LaC82]+"),
                                          ("C70", "[C70]2+"), ("Sc3N@C80", "[Sc3NC80]-")])
def test_ion_envelopes_agree_with_molmass(ours, theirs):
    # molmass corrects ion m/z for the electron mass as the kit does (libraries.md B)
    molmass = pytest.importorskip("molmass")
    f = molmass.Formula(theirs)
    z = f.charge
    env = isotope_envelope(ours, z, threshold=1e-12)
    spec = f.spectrum()
    for nominal, mz in zip(env.nominal, env.mz, strict=False):
        if int(nominal) in spec:
            assert abs(spec[int(nominal)].mz - mz) < 1e-6


def _isospec(formula: str, c13: float):
    isospec = pytest.importorskip("IsoSpecPy")
    counts = parse_formula(formula).counts
    elements = sorted(counts)
    masses, probs = [], []
    for e in elements:
        iso = ISOTOPES[e]
        if e == "C":
            iso = ((12, 12.0, 1 - c13), (13, iso[1][1], c13))
        masses.append([m for _, m, _ in iso])
        probs.append([f for _, _, f in iso])
    dist = isospec.IsoTotalProb(
        1 - 1e-12, atomCounts=[counts[e] for e in elements], isotopeMasses=masses,
        isotopeProbabilities=probs,
    )
    return np.array(list(dist.masses)), np.array(list(dist.probs))


@pytest.mark.parametrize("formula", [f for f, _ in ORACLE_FORMULAS] + ["Gd@C82", "Er2C2@C82",
                                                                       "C60O2", "C70H4"])
@pytest.mark.parametrize("c13", [0.0107, 0.010788, 0.05])
def test_fine_structure_agrees_with_isospecpy(formula, c13):
    # IsoSpecPy with custom probabilities (libraries.md B) as a second oracle: every
    # isotopologue above 1e-6 has the same mass (1e-6 u) and probability (1e-6)
    m_ref, p_ref = _isospec(formula, c13)
    env = isotope_envelope(formula, fine=True, c13=c13, threshold=1e-10)
    big = p_ref > 1e-6
    for m, p in zip(m_ref[big], p_ref[big], strict=False):
        i = int(np.argmin(np.abs(env.mz - m)))
        assert abs(env.mz[i] - m) < 1e-6
        assert abs(env.abundance[i] - p) < 1e-6
    # and the aggregated envelope is the nominal binning of the fine structure
    agg = isotope_envelope(formula, c13=c13, threshold=1e-12)
    nominal_ref = np.round(m_ref - m_ref.min()).astype(int)
    for k in range(agg.nominal.size):
        sel = nominal_ref == (agg.nominal[k] - agg.nominal[0])
        if p_ref[sel].sum() < 1e-5:  # the oracle's truncation (1e-12) must not move a centroid
            continue
        assert abs(p_ref[sel].sum() - agg.abundance[k]) < 1e-6
        centroid = np.sum(m_ref[sel] * p_ref[sel]) / p_ref[sel].sum()
        assert abs(centroid - agg.mz[k]) < 1e-6


def test_envelope_abundances_sum_to_one():
    # common practice, no source: probabilities of all isotopologues sum to 1
    for f in ("C60", "Gd@C82", "Er2C2@C82", "C60H36", "Ba@C74"):
        assert isotope_envelope(f, threshold=0).abundance.sum() == pytest.approx(1, abs=1e-12)


def test_la_at_c82_has_138la_peak_below_the_monoisotopic_peak():
    # from memory / libraries.md B: 138La (0.089 %) gives a small M-1 peak, 0.0888 % of M
    env = isotope_envelope("La@C82")
    assert env.nominal[0] == 1122 and env.nominal[1] == 1123
    assert env.relative[0] == pytest.approx(0.000888, abs=2e-6)


def test_enriched_and_extreme_c13():
    # common practice, no source: p = 0 gives one line; p = 1 gives one line at 60 x 13C
    assert len(isotope_envelope("C60", c13=0.0)) == 1
    full = isotope_envelope("C60", c13=1.0)
    assert len(full) == 1 and full.mz[0] == pytest.approx(60 * 13.00335483507)
    enriched = isotope_envelope("C60", c13=0.05)
    # binomial mean n p = 3 heavy atoms: the M+3 line is the largest
    assert int(np.argmax(enriched.abundance)) == 2 or int(np.argmax(enriched.abundance)) == 3


def test_profile_integrates_to_total_abundance_and_has_fwhm_m_over_r():
    # common practice, no source: Gaussian lines of unit area, FWHM = m / R
    env = isotope_envelope("C60", 1)
    x, y = envelope_profile(env, 2000.0, points_per_fwhm=40)
    assert np.trapezoid(y, x) == pytest.approx(env.abundance.sum(), rel=1e-4)
    single = isotope_envelope("C60", 1, c13=0.0)
    x, y = envelope_profile(single, 2000.0, points_per_fwhm=200)
    above = x[y >= y.max() / 2]
    assert above[-1] - above[0] == pytest.approx(single.mz[0] / 2000.0, rel=0.01)


def test_profile_rejects_bad_resolving_power():
    with pytest.raises(FormulaError, match=r"resolving_power must be > 0, got 0"):
        envelope_profile(isotope_envelope("C60", 1), 0)


@pytest.mark.parametrize("p_true", [0.0107, 0.05, 0.2])
def test_fit_c13_recovers_enrichment(p_true):
    # issue 5: a synthetic envelope made with 5 % 13C is fitted back within +-0.3 %
    # (common practice, no source: least squares over p)
    rng = np.random.default_rng(7)
    env = isotope_envelope("C60", 1, c13=p_true, threshold=1e-4)
    y = env.abundance * (1 + rng.normal(0, 0.01, env.abundance.size))
    fit = fit_c13("C60", env.mz, y, 1)
    assert abs(fit.c13 - p_true) < 0.003
    assert fit.cosine > 0.999


def test_fit_c13_needs_two_peaks():
    with pytest.raises(FormulaError, match=r"fit_c13 needs at least 2 peaks"):
        fit_c13("C60", [720.0], [1.0], 1)


def test_envelope_frame():
    df = isotope_envelope("C70", 1).to_frame()
    assert list(df.columns) == ["mz", "abundance", "relative_abundance"]
    assert df.relative_abundance.max() == 1.0
