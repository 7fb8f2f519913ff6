"""Peak picking, baselines, noise, integrals on synthetic spectra with known truth.

Synthetic spectra are sums of Lorentzian lines (the natural line shape of
spectroscopy; common practice, no source) with seeded Gaussian noise of known
sigma and sloped or curved baselines.  Stated thresholds: snr=5 finds every
true line of true S/N >= 7 within 0.25 FWHM (0.5 FWHM at S/N 7-10), and
reports nothing that is not a true line, for lines at least 10 FWHM apart.
"""

from __future__ import annotations

import numpy as np
import pytest

from cageprint.errors import SpectrumError
from cageprint.spectra import (
    PEAK_SNR,
    PeakResult,
    Spectrum,
    crop,
    estimate_baseline,
    estimate_noise,
    integrate,
    merge_peaks,
    pick_peaks,
    remove_baseline,
    smooth,
)

SIGMA = 0.01
FWHM = 4.0
TRUE_SNR = np.array([2, 3, 4, 6, 7, 8, 10, 15, 20, 40, 80, 150])


def lorentz(x, c, h, w):
    return h / (1 + ((x - c) / (w / 2)) ** 2)


def _ir_case(seed: int, baseline: str):
    x = np.arange(400.0, 1600.0, 0.5)
    rng = np.random.default_rng(seed)
    while True:  # lines at least 10 FWHM apart
        centres = np.sort(rng.uniform(450, 1550, TRUE_SNR.size))
        if np.min(np.diff(centres)) >= 10 * FWHM:
            break
    heights = rng.permutation(TRUE_SNR) * SIGMA
    base = {
        "flat": np.full(x.size, 0.3),
        "sloped": 0.3 + 4e-4 * (x - 400),
        "curved": 0.3 + 2e-4 * (x - 400) + 1.5e-6 * (x - 1000) ** 2,
    }[baseline]
    y = base + sum(lorentz(x, c, h, FWHM) for c, h in zip(centres, heights, strict=True))
    y = y + rng.normal(0, SIGMA, x.size)
    return Spectrum(x, y, technique="ir"), centres, heights / SIGMA, base


@pytest.mark.parametrize("baseline", ["flat", "sloped", "curved"])
@pytest.mark.parametrize("seed", range(6))
def test_true_lines_found_and_no_false_ones(seed, baseline):
    # stated thresholds in the module docstring; synthetic truth (common practice, no source)
    s, centres, snr_true, _ = _ir_case(seed, baseline)
    p = pick_peaks(s, snr=5.0)
    d = np.abs(p.positions[:, None] - centres[None, :])
    # no false peaks: every reported peak is one of the true lines
    assert np.all(d.min(axis=1) <= 0.75 * FWHM), p.positions[d.min(axis=1) > 0.75 * FWHM]
    for c, snr in zip(centres, snr_true, strict=True):
        if snr < 7:
            continue
        k = np.argmin(np.abs(p.positions - c))
        tol = (0.5 if snr < 15 else 0.25) * FWHM
        assert abs(p.positions[k] - c) <= tol, (c, snr, p.positions[k])
        assert abs(p.snr[k] / snr - 1) < 0.35, (snr, p.snr[k])
        assert abs(p.widths[k] / FWHM - 1) < (0.6 if snr < 15 else 0.2)


def test_centres_are_fitted_between_grid_points():
    # off-grid centres on a 0.5 grid, no noise: every fit beats the grid by far
    x = np.arange(0.0, 200.0, 0.5)
    centres = np.array([40.13, 90.37, 140.21])
    y = sum(lorentz(x, c, 1.0, FWHM) for c in centres)
    s = Spectrum(x, y, technique="raman")
    # the log-parabola ('gaussian') fit sits 3 % low on Lorentzian lines (shape mismatch)
    for fit, tol, htol in (("parabola", 0.06, 0.015), ("gaussian", 0.03, 0.035),
                           ("lorentzian", 0.002, 0.003)):  # neighbours' tails tilt the fit
        p = pick_peaks(s, baseline=None, noise=1e-3, fit=fit)
        assert np.allclose(p.positions, centres, atol=tol), (fit, p.positions)
        assert np.allclose(p.heights, 1.0, atol=htol), (fit, p.heights)
    p = pick_peaks(s, baseline=None, noise=1e-3, fit="none")
    assert np.allclose(p.positions, [40.0, 90.5, 140.0])
    p = pick_peaks(s, baseline=None, noise=1e-3, fit="lorentzian")
    assert np.allclose(p.widths, FWHM, rtol=0.01)


def test_gaussian_lines_exact_with_log_parabola():
    # the log of a Gaussian is a parabola, so the 'gaussian' fit is exact (common practice)
    x = np.linspace(700, 760, 6001)
    c, sd = 720.0137, 0.05
    s = Spectrum(x, 100 * np.exp(-0.5 * ((x - c) / sd) ** 2), technique="mass")
    p = pick_peaks(s, baseline=None, noise=0.01, fit="gaussian")
    assert len(p) == 1
    assert abs(p.positions[0] - c) < 1e-9 and abs(p.heights[0] - 100) < 1e-6
    assert abs(p.widths[0] - 2.3548200 * sd) < 0.002  # FWHM = 2 sqrt(2 ln 2) sigma


def test_diagnostics_and_rejections():
    # common practice, no source: a result says which thresholds it used and what it dropped
    s, _, _, _ = _ir_case(1, "sloped")
    p = pick_peaks(s, snr=PEAK_SNR)
    d = p.diagnostics
    assert d["snr"] == PEAK_SNR and d["fit"] == "parabola"
    assert d["baseline"]["method"] == "arpls"
    assert abs(d["noise"] / SIGMA - 1) < 0.1
    assert d["prominence"] == pytest.approx(PEAK_SNR * d["noise"])
    assert d["candidates"] >= len(p)
    assert all("position" in r and "reason" in r for r in d["rejected"])
    strict = pick_peaks(s, snr=25, prominence=5 * SIGMA)
    assert len(strict) < len(p)
    assert any("below snr=25" in r["reason"] for r in strict.diagnostics["rejected"])


def test_region_and_min_height_and_prominence():
    s, centres, snr_true, _ = _ir_case(2, "flat")
    lo, hi = 600.0, 1200.0
    p = pick_peaks(s, region=(hi, lo))
    assert np.all((p.positions >= lo) & (p.positions <= hi))
    assert p.diagnostics["region"] == (hi, lo)
    tall = pick_peaks(s, min_height=0.5)
    assert np.all(tall.heights >= 0.5) and len(tall) == np.sum(snr_true * SIGMA >= 0.55)
    prom = pick_peaks(s, prominence=0.3)
    assert prom.diagnostics["prominence"] == 0.3 and len(prom) <= len(p)


def test_min_separation_merges_close_lines():
    # common practice, no source: lines closer than the resolution count as one
    x = np.arange(0.0, 100.0, 0.05)
    y = lorentz(x, 50.0, 1.0, 0.5) + lorentz(x, 51.0, 0.5, 0.5) + lorentz(x, 80.0, 1.0, 0.5)
    s = Spectrum(x, y, technique="nmr")
    apart = pick_peaks(s, baseline=None, noise=1e-3)
    assert len(apart) == 3
    merged = pick_peaks(s, baseline=None, noise=1e-3, min_separation=1.5)
    assert len(merged) == 2
    assert 50.0 < merged.positions[0] < 51.0  # height-weighted
    assert merged.heights[0] == pytest.approx(apart.heights[0])
    assert merged.areas[0] == pytest.approx(apart.areas[0] + apart.areas[1])
    assert merged.diagnostics["merged"] == [[apart.positions[0], apart.positions[1]]]


def test_peak_list_spectra_are_filtered_not_fitted():
    # common practice, no source: centroided intensities add when merged
    s = Spectrum([720.0, 721.0, 722.0, 840.0, 900.0], [100, 65, 21, 30, 0.5], technique="mass",
                 kind="peaks")
    p = pick_peaks(s, min_height=1.0)
    assert p.positions.tolist() == [720.0, 721.0, 722.0, 840.0]
    assert p.diagnostics["fit"] == "none" and np.isnan(p.diagnostics["noise"])
    assert p.diagnostics["rejected"][0]["position"] == 900.0
    p = pick_peaks(s, noise=5.0, snr=5.0)
    assert p.positions.tolist() == [720.0, 721.0, 840.0]
    m = pick_peaks(s, min_separation=1.5, min_height=1.0)
    assert m.heights.tolist() == [186.0, 30.0]  # centroids merge by summing


def test_peak_result_round_trip_and_frame():
    s, _, _, _ = _ir_case(0, "flat")
    p = pick_peaks(s)
    q = PeakResult.from_dict(p.to_dict())
    for name in ("positions", "heights", "widths", "areas", "snr"):
        assert np.array_equal(getattr(p, name), getattr(q, name))
    assert q.diagnostics["noise"] == p.diagnostics["noise"]
    f = p.to_frame()
    assert list(f.columns) == ["position", "height", "fwhm", "area", "snr"] and len(f) == len(p)
    with pytest.raises(ValueError, match="read-only"):
        p.positions[0] = 1.0
    with pytest.raises(AttributeError):
        p.positions = np.zeros(3)
    with pytest.raises(SpectrumError, match=r"PeakResult.heights has 1 values for 2 peaks"):
        PeakResult([1.0, 2.0], [1.0], [1.0, 1.0], [1.0, 1.0], [1.0, 1.0])


def test_no_peaks_is_an_empty_result():
    x = np.arange(1000.0)
    s = Spectrum(x, np.random.default_rng(0).normal(0, 1, x.size), technique="ir")
    p = pick_peaks(s, snr=8)
    assert len(p) == 0 and p.to_frame().empty


# ----------------------------------------------------------------------------- integrals


def _nmr(seed=0, baseline=True):
    x = np.linspace(120.0, 160.0, 16001)  # 0.0025 ppm steps
    rng = np.random.default_rng(seed)
    # C70 pattern: 5 lines of relative intensity 1:2:1:2:1 at 150.07, 147.52, 146.82, 144.77,
    # 130.28 ppm (R. Taylor et al., J. Chem. Soc., Chem. Commun. 1990, 1423; from memory)
    lines = [(150.07, 1), (147.52, 2), (146.82, 1), (144.77, 2), (130.28, 1)]
    w = 0.01
    y = sum(lorentz(x, c, 10.0 * n, w) for c, n in lines)
    if baseline:
        y = y + 0.5 + 0.02 * (x - 140) + 0.001 * (x - 140) ** 2
    y = y + rng.normal(0, 0.05, x.size)
    return Spectrum(x, y, technique="nmr"), lines


@pytest.mark.parametrize("seed", range(4))
def test_integral_ratios_within_5_percent(seed):
    # NMR integrals are proportional to the number of nuclei (common practice, no source)
    s, lines = _nmr(seed)
    flat, _ = remove_baseline(s)
    p = pick_peaks(flat, baseline=None, snr=5)
    assert np.allclose(np.sort(p.positions), sorted(c for c, _ in lines), atol=0.003)
    r = integrate(flat, p, half_width=0.15)
    want = np.array([n for _, n in sorted(lines)], dtype=float)
    ratios = r.integrals / r.integrals[0] * want[0]
    assert np.all(np.abs(ratios / want - 1) < 0.05), ratios
    assert np.allclose(r.relative, r.integrals / r.integrals.min())


def test_integrate_with_baseline_argument_and_default_half_width():
    s, lines = _nmr(7)
    p = pick_peaks(s, snr=5)
    r = integrate(s, p, baseline="arpls")
    assert r.diagnostics["half_width_rule"].endswith("median FWHM")
    want = np.array([n for _, n in sorted(lines)], dtype=float)
    assert np.all(np.abs(r.ratios(0) * want[0] / want - 1) < 0.05)


def test_overlapping_regions_split_at_midpoint():
    # two lines 0.1 apart with half_width 0.2: regions meet at the midpoint (common practice)
    x = np.linspace(0, 10, 20001)
    y = lorentz(x, 5.0, 1.0, 0.01) + lorentz(x, 5.1, 2.0, 0.01)
    r = integrate(Spectrum(x, y, technique="nmr"), [5.1, 5.0], half_width=0.2)
    assert r.lo.tolist() == pytest.approx([4.8, 5.05]) and r.hi.tolist() == pytest.approx(
        [5.05, 5.3])

    def area(c, h, a, b):  # integral of h / (1 + ((x - c) / g) ** 2) from a to b, g = 0.005
        return h * 0.005 * (np.arctan((b - c) / 0.005) - np.arctan((a - c) / 0.005))

    want = [area(5.0, 1, 4.8, 5.05) + area(5.1, 2, 4.8, 5.05),
            area(5.0, 1, 5.05, 5.3) + area(5.1, 2, 5.05, 5.3)]
    assert r.integrals == pytest.approx(want, rel=1e-4)
    assert r.diagnostics["split_at_midpoints"] == 1
    back = type(r).from_dict(r.to_dict())
    assert np.array_equal(back.integrals, r.integrals)
    assert list(r.to_frame().columns) == ["position", "lo", "hi", "integral", "relative"]


def test_trapezoid_integral_exact_for_piecewise_linear():
    # a triangle of base 2 and height 1 has area 1 (geometry)
    x = np.linspace(0, 4, 401)
    y = np.clip(1 - np.abs(x - 2), 0, None)
    r = integrate(Spectrum(x, y, technique="nmr"), [2.0], half_width=1.5)
    assert r.integrals[0] == pytest.approx(1.0, abs=1e-12)


# ----------------------------------------------------------------------------- noise, baseline


@pytest.mark.parametrize("sigma", [0.001, 0.05, 2.0])
def test_noise_estimate_is_robust_to_lines_and_baseline(sigma):
    # sample sigma of seeded Gaussian noise (common practice): within 6 % on 2400 points
    s, _, _, base = _ir_case(3, "curved")
    clean = s.y - np.random.default_rng(3).normal(0, 0, s.x.size)
    rng = np.random.default_rng(11)
    y = (clean - base) / SIGMA * sigma + base + rng.normal(0, sigma, s.x.size)
    est, diag = estimate_noise(s.replace(y=y))
    # the spectrum already holds SIGMA-scaled noise: total sigma adds in quadrature
    assert est == pytest.approx(np.hypot(sigma, sigma), rel=0.06)
    assert diag["method"] == "mad-second-difference"


def test_noise_region():
    x = np.arange(2000.0)
    y = np.where(x < 1000, np.random.default_rng(0).normal(0, 1, x.size),
                 np.random.default_rng(1).normal(0, 5, x.size))
    s = Spectrum(x, y, technique="ir")
    assert estimate_noise(s, region=(0, 999))[0] == pytest.approx(1.0, rel=0.1)
    assert estimate_noise(s, region=(1000, 1999))[0] == pytest.approx(5.0, rel=0.1)
    with pytest.raises(SpectrumError, match=r"noise needs at least 5 points; the region has 3"):
        estimate_noise(s, region=(0, 2))


@pytest.mark.parametrize("method", ["arpls", "imodpoly", "snip"])
def test_baseline_recovered_away_from_lines(method):
    # arPLS: Baek et al., Analyst 140, 250 (2015); methods as implemented by pybaselines
    s, centres, _, base = _ir_case(4, "curved")
    params = {"poly_order": 3} if method == "imodpoly" else (
        {"max_half_window": 40} if method == "snip" else {})
    b, diag = estimate_baseline(s, method, **params)
    far = np.min(np.abs(s.x[:, None] - centres[None, :]), axis=1) > 5 * FWHM
    rms = np.sqrt(np.mean((b - base)[far] ** 2))
    assert rms < 3 * SIGMA, rms  # pybaselines comparison in libraries.md section D
    assert diag["method"] == method


def test_long_spectra_baseline_is_binned():
    x = np.linspace(0, 1000, 100_000)
    y = 1 + 1e-3 * x + lorentz(x, 500, 1, 0.5) + np.random.default_rng(0).normal(0, 0.01, x.size)
    b, diag = estimate_baseline(Spectrum(x, y, technique="ir"))
    assert diag["bin_factor"] == 5
    assert np.sqrt(np.mean((b - (1 + 1e-3 * x)) ** 2)) < 0.01


def test_remove_baseline_and_smooth_and_crop():
    s, _, _, base = _ir_case(5, "sloped")
    flat, d = remove_baseline(s)
    assert flat.meta["baseline"] == "arpls" and d["baseline"].shape == s.x.shape
    sm, d = smooth(s, window=10, order=2)
    assert d == {"method": "savitzky-golay", "window": 11, "order": 2}
    assert estimate_noise(sm)[0] < 0.6 * estimate_noise(s)[0]
    c, d = crop(s, 500, 600)
    assert c.x[0] >= 500 and c.x[-1] <= 600 and d["kept"] == len(c)
    with pytest.raises(SpectrumError, match=r"crop to \[2000.0, 3000.0\] cm-1 keeps 0 points"):
        crop(s, 2000, 3000)
    with pytest.raises(SpectrumError, match=r"smoothing window of 9001 points is longer"):
        smooth(s, window=9000)
    with pytest.raises(SpectrumError, match=r"baseline method 'magic' is not one of arpls"):
        estimate_baseline(s, "magic")
    with pytest.raises(SpectrumError, match=r"fit='spline' is not one of parabola"):
        pick_peaks(s, fit="spline")
    peaks = Spectrum([1.0, 2.0], [1.0, 2.0], technique="mass", kind="peaks")
    with pytest.raises(SpectrumError, match=r"smooth needs a profile spectrum"):
        smooth(peaks)


def test_merge_peaks_arguments():
    p = PeakResult([1.0, 2.0], [1.0, 1.0], [0.1, 0.1], [1.0, 1.0], [5.0, 5.0])
    with pytest.raises(SpectrumError, match=r"resolution must be > 0, got 0"):
        merge_peaks(p, 0)
    with pytest.raises(SpectrumError, match=r"heights='mean' must be 'max' or 'sum'"):
        merge_peaks(p, 1.0, heights="mean")
    assert len(merge_peaks(p, 0.5)) == 2 and len(merge_peaks(p, 1.5)) == 1


# ----------------------------------------------------------------------------- reference checks


def test_region_integrals_match_a_slow_reference():
    # slow, obvious reference: dense resampling of the piecewise-linear curve + trapezoid rule
    from cageprint.spectra.processing import _region_integrals

    rng = np.random.default_rng(9)
    x = np.sort(rng.uniform(0, 10, 300))
    y = rng.normal(0, 1, x.size)
    lo = rng.uniform(0, 9, 20)
    hi = lo + rng.uniform(0.01, 1.0, 20)
    fast = _region_integrals(x, y, lo, hi)
    for a, b, f in zip(lo, hi, fast, strict=True):
        grid = np.union1d(np.linspace(a, b, 20001), x[(x > a) & (x < b)])
        slow = np.trapezoid(np.interp(grid, x, y), grid)
        assert f == pytest.approx(slow, abs=1e-9)


def test_noise_matches_sample_std_on_pure_noise():
    # on pure white noise the estimate must agree with the sample standard deviation
    # (common practice, no source): within 5 % on 50000 points
    y = np.random.default_rng(21).normal(3.0, 0.7, 50_000)
    s = Spectrum(np.arange(y.size, dtype=float), y, technique="raman")
    assert estimate_noise(s)[0] == pytest.approx(np.std(y), rel=0.05)


def test_gaussian_mass_lines_with_smoothing():
    # Gaussian profile lines (mass spectrometry; common practice), seeded noise, smooth=True
    x = np.linspace(700.0, 760.0, 12001)
    centres = np.array([710.0, 720.0, 721.003, 730.0, 745.5])
    snr = np.array([10.0, 200.0, 120.0, 8.0, 30.0])
    sd = 0.05
    y = sum(h * 0.02 * np.exp(-0.5 * ((x - c) / sd) ** 2) for c, h in zip(centres, snr,
                                                                            strict=True))
    y = y + np.random.default_rng(4).normal(0, 0.02, x.size)
    p = pick_peaks(Spectrum(x, y, technique="mass"), smooth=True, fit="gaussian")
    assert len(p) == len(centres)
    assert np.allclose(p.positions, centres, atol=0.01)
    assert np.allclose(p.snr / snr, 1, atol=0.3)
    assert p.diagnostics["smooth"]["window"] == 9


def test_too_many_candidates_is_refused():
    from cageprint.spectra.processing import MAX_CANDIDATES

    y = np.random.default_rng(0).normal(0, 1, 5 * MAX_CANDIDATES)
    s = Spectrum(np.arange(y.size, dtype=float), y, technique="ir")
    with pytest.raises(SpectrumError, match=rf"candidate maxima pass prominence=0 .*\(more than "
                       rf"MAX_CANDIDATES={MAX_CANDIDATES}\); raise snr="):
        pick_peaks(s, snr=None, baseline=None)


def test_baseline_is_remembered_per_spectrum_and_settings():
    # a live panel re-picks the same spectrum at every new threshold: the baseline is kept,
    # keyed by the data and the settings, and handed out as a copy (common practice, no source)
    from cageprint.spectra import filters

    x = np.linspace(0, 100, 4001)
    y = 0.01 * x + np.exp(-((x - 50) / 0.5) ** 2)
    s = Spectrum(x, y, technique="ir")
    first, _ = filters.estimate_baseline(s)
    first[:] = -1.0  # the caller's copy, not the memo's
    again, diag = filters.estimate_baseline(s)
    assert diag["method"] == "arpls" and abs(again[2000] - 0.5) < 0.05
    other, _ = filters.estimate_baseline(Spectrum(x, y + 0.3, technique="ir"))
    assert abs(other[2000] - again[2000] - 0.3) < 0.02
    _, coarse = filters.estimate_baseline(s, lam=1e2)  # other settings: another entry
    assert coarse["params"]["lam"] == 1e2 and diag["params"]["lam"] != 1e2


def test_quadratic_fit_equals_numpy_polyfit():
    # the apex refinement's least-squares parabola against numpy.polyfit (a general-purpose
    # reference; common practice, no source)
    from cageprint.spectra.peaks import _quadratic

    rng = np.random.default_rng(5)
    for n in (3, 4, 7, 15):
        t = np.sort(rng.uniform(-1, 1, n))
        y = rng.normal(size=n)
        np.testing.assert_allclose(_quadratic(t, y), np.polyfit(t, y, 2), rtol=1e-8, atol=1e-10)
