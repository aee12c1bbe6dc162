"""Moving spans: frequencies against independent numerical solutions, sag against
published closed forms and worked examples, slack at the critical speed."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.linalg import eig

from physics import spans as sp
from physics.analysis import Options, analyse
from physics.model import Belt, Drive, Loop, Pulley, Role, Side

LBF = 4.4482216152605


def fd_moving_frequencies(P: float, m: float, L: float, v: float, EI: float = 0.0, nodes: int = 300,
                          modes: int = 3) -> np.ndarray:
    """Independent check: finite differences on m w_tt + 2 m v w_xt - P w_xx + EI w_xxxx = 0,
    pinned ends (w = w'' = 0), central differences, the quadratic eigenproblem in first-order
    form solved by scipy.linalg.eig."""
    h = L / (nodes + 1)
    N = nodes
    I = np.eye(N)
    D1 = (np.eye(N, k=1) - np.eye(N, k=-1)) / (2 * h)
    D2 = (np.eye(N, k=1) - 2 * I + np.eye(N, k=-1)) / h**2
    D4 = (np.eye(N, k=2) - 4 * np.eye(N, k=1) + 6 * I - 4 * np.eye(N, k=-1) + np.eye(N, k=-2)) / h**4
    # pinned ends: the ghost node mirrors with a sign change (w_-1 = -w_1), w'' = 0
    D4[0, 0] -= 1 / h**4
    D4[-1, -1] -= 1 / h**4
    M = m * I
    G = 2 * m * v * D1
    K = -P * D2 + EI * D4
    A = np.block([[np.zeros((N, N)), I], [-np.linalg.solve(M, K), -np.linalg.solve(M, G)]])
    lam = eig(A, right=False)
    w = np.sort(np.abs(lam.imag[lam.imag > 1e-9]))
    return w[:modes] / (2 * math.pi)


def galerkin_string(P: float, T: float, m: float, L: float, v: float, terms: int = 80, modes: int = 3) -> np.ndarray:
    """Independent check: sine-series Galerkin of the gyroscopic moving string (as in Wickert
    and Mote 1990, from memory), first-order form, scipy.linalg.eig."""
    j = np.arange(1, terms + 1)
    M = m * L / 2 * np.eye(terms)
    K = np.diag(P * (j * math.pi / L) ** 2 * L / 2)
    ii, jj = np.meshgrid(j, j, indexing="ij")
    with np.errstate(divide="ignore", invalid="ignore"):
        G = np.where(ii != jj, 2 * m * v * ii * jj * (1 - (-1.0) ** (ii + jj)) / (ii**2 - jj**2), 0.0)
    A = np.block([[np.zeros((terms, terms)), np.eye(terms)], [-np.linalg.solve(M, K), -np.linalg.solve(M, G)]])
    lam = eig(A, right=False)
    w = np.sort(np.abs(lam.imag[lam.imag > 1e-9]))
    return w[:modes] / (2 * math.pi)


@pytest.mark.parametrize("v_over_c", [0.0, 0.3, 0.6, 0.9])
def test_string_closed_form_against_numerical_eigensolution(v_over_c):
    # f_n = n P / (2 L sqrt(m T)) (Archibald and Emslie 1958; Wickert and Mote 1990, from
    # memory) against an independent Galerkin solution, 1 % for n = 1..3
    m, L, T = 0.12, 0.4, 400.0
    c = math.sqrt(T / m)
    v = v_over_c * c
    P = T - m * v * v
    closed = sp.string_frequencies(P, T, m, L, modes=3)
    numeric = galerkin_string(P, T, m, L, v)
    assert numeric == pytest.approx(closed, rel=1e-2)
    # and the finite-difference solution agrees too (coarser, 1 %)
    fd = fd_moving_frequencies(P, m, L, v, nodes=400)
    assert fd == pytest.approx(closed, rel=1e-2)


def test_moving_string_values():
    # closed form f_n = n P / (2 L sqrt(m T)) (Archibald and Emslie, "The vibration of a
    # string having a uniform motion along its length", J. Appl. Mech., 1958; Wickert and
    # Mote, J. Appl. Mech., 1990; from memory); computed for m 0.12, L 0.4, T 400:
    # f1 at rest sqrt(400/0.12) / 0.8 = 72.1688; v = 40 (P = 400 - 0.12 * 40^2 = 208):
    # 37.5278 / 75.0555 / 112.5833 Hz; the 80-term Galerkin solution galerkin_string
    # (independent method) agrees to 1e-5 relative (asserted to 1 % in
    # test_string_closed_form_against_numerical_eigensolution)
    assert sp.string_frequencies(400.0, 400.0, 0.12, 0.4, 1)[0] == pytest.approx(72.1688, abs=1e-4)
    P = 400.0 - 0.12 * 40**2
    assert sp.string_frequencies(P, 400.0, 0.12, 0.4, 3) == pytest.approx([37.5278, 75.0555, 112.5833], abs=1e-4)


def test_beam_at_rest_equals_the_stationary_formula():
    # pinned tensioned beam, exact: f_n = (n / 2L) sqrt(T/m) sqrt(1 + n^2 B),
    # B = pi^2 EI / (T L^2) (Blevins, Formulas for Natural Frequency and Mode Shape, 1979,
    # beams with axial load; from memory); computed for m 0.12, L 0.4, T 400, EI 0.5
    # (B = 0.07711): 74.8995 / 165.1026 / 281.7875 Hz
    f = sp.beam_frequencies(400.0, 0.12, 0.4, 0.5, 0.0, 3)
    assert f == pytest.approx(sp.pinned_beam_frequencies(400.0, 0.12, 0.4, 0.5, 3), rel=1e-9)
    assert f == pytest.approx([74.8995, 165.1026, 281.7875], abs=1e-4)
    # clamped ends at rest, computed: the roots in f of the 4x4 characteristic determinant of
    # EI w'''' - T w'' = m (2 pi f)^2 w with w = w' = 0 at both ends (w a sum of cosh, sinh
    # of a x and cos, sin of b x; a^2, b^2 the roots of EI s^2 -/+ T s - m (2 pi f)^2 = 0),
    # found by bracketing and Brent's method; Fletcher's stiff-string approximation
    # (J. Acoust. Soc. Am., 1964, from memory) gives 90.48 / 199.45 / 340.41, within 2 %
    fc = sp.beam_frequencies(400.0, 0.12, 0.4, 0.5, 0.0, 3, ends="clamped")
    assert fc == pytest.approx([90.7921, 198.6821, 334.855], abs=1e-3)


@pytest.mark.parametrize("v", [20.0, 40.0, 55.0])
def test_moving_beam_against_finite_differences(v):
    m, L, T, EI = 0.12, 0.4, 400.0, 0.5
    P = T - m * v * v
    gal = sp.beam_frequencies(P, m, L, EI, v, 3)
    fd = fd_moving_frequencies(P, m, L, v, EI=EI, nodes=300)
    assert gal == pytest.approx(fd, rel=1e-2)


def test_moving_beam_values():
    # computed: a 60-term sine-series Galerkin solution of the moving pinned beam
    # m w_tt + 2 m v w_xt - P w_xx + EI w_xxxx = 0 (galerkin_string with EI k^4 added to the
    # stiffness; gyroscopic form as in Wickert and Mote 1990, from memory), independent of
    # the basis physics.spans uses; m 0.12, L 0.4, T 400, EI 0.5, P = T - m v^2:
    # v = 20: 67.5437 / 154.8837 / 271.33; v = 40: 45.3827 / 123.7779 / 239.4036; finite
    # differences agree to 1 % (test_moving_beam_against_finite_differences)
    for v, ref in ((20.0, [67.5437, 154.8837, 271.33]), (40.0, [45.3827, 123.7779, 239.4036])):
        f = sp.beam_frequencies(400.0 - 0.12 * v * v, 0.12, 0.4, 0.5, v, 3)
        assert f == pytest.approx(ref, rel=2e-5)


def test_fundamental_goes_to_zero_with_tension_and_the_span_goes_slack():
    # f1 -> 0 as P -> 0 (the closed form n P / (2 L sqrt(m T)) above); an unloaded
    # fixed-centre drive reaches it at v = sqrt(T0 / m) (derived: fixed centres keep the mean
    # T = P + m v^2 at T0, and with no load every span carries the mean, so P = T0 - m v^2)
    t0, m = 300.0, 0.1
    v_crit = math.sqrt(t0 / m)
    f_prev = math.inf
    for frac in (0.5, 0.9, 0.99, 0.999):
        v = frac * v_crit
        f = sp.string_frequencies(t0 - m * v * v, t0, m, 0.5, 1)[0]
        assert f < f_prev
        f_prev = f
    assert f_prev < 0.002 * sp.string_frequencies(t0, t0, m, 0.5, 1)[0]
    rpm = lambda v: v / 0.05 * 30 / math.pi
    for frac, slack in ((0.995, False), (1.005, True)):
        a = Pulley("A", (0.0, 0.0), 0.05, Role.DRIVER, speed_rad_s=frac * v_crit / 0.05, direction=1)
        b = Pulley("B", (0.6, 0.0), 0.05, Role.IDLER)
        belt = Belt(mass_per_length_kg_m=m, friction=0.3, install_tension_n=t0)
        res = analyse(Drive({"A": a, "B": b}, (Loop("V", ("A", "B"), (1, 1), (Side.INSIDE,) * 2, (False,) * 2, belt),)))
        codes = [f.code for f in res.findings]
        assert ("slack-span" in codes) is slack
        dyn = res.loops["V"].mechanics.dynamics
        if slack:
            assert dyn.frequencies_hz[0, 0, 0] == 0.0
        _ = rpm


def test_catenary_against_worked_examples():
    # level span, L = 10 m, w = 4.9033 N/m, H = 200 N: 0.30684 m (catenary sag
    # d = a (cosh(L / 2a) - 1), a = H / w: Irvine, Cable Structures, MIT Press 1981, ch. 1,
    # from memory; computed with a = 40.7889 m); the parabola w L^2 / 8H gives 0.30646 m
    # (0.125 % less)
    assert sp.catenary_sag([10.0, 0.0], [0, -1], 4.9033, 200.0) == pytest.approx(0.30684, abs=1e-5)
    assert sp.parabolic_sag(4.9033, 10.0, 200.0) == pytest.approx(0.30646, abs=1e-5)
    # cable of 200 ft, 10 lbf/ft, sagging 25 ft: H = 2040.4 lbf (a statics-text worked
    # example, from memory; computed: a (cosh(100 / a) - 1) = 25 solved for a by Brent's
    # method gives a = 204.036 ft, H = w a)
    assert sp.catenary_sag([200.0, 0.0], [0, -1], 10.0, 2040.36) == pytest.approx(25.0, abs=2e-3)
    # inclined: run 100, rise 30, w 10, H 5000: largest sag along gravity 2.61195 at x 50.239
    assert sp.catenary_sag([100.0, 30.0], [0, -1], 10.0, 5000.0) == pytest.approx(2.61195, abs=1e-5)
    # small sag: catenary and parabola agree, at any incline, with H = P cos(beta)
    for beta in (0.0, 0.3, 1.0):
        chord = 2.0 * np.array([math.cos(beta), math.sin(beta)])
        cat = sp.catenary_sag(chord, [0, -1], 1.0, 1000.0 * math.cos(beta))
        assert cat == pytest.approx(sp.parabolic_sag(1.0, 2.0, 1000.0), rel=1e-4)


def test_shigley_flat_belt_dip():
    # Shigley 9th ed., Example 17-1 (from memory): dip = 3 C^2 w / (2 Fi) = 0.14 in with
    # C = 8 ft, w = 0.393 lbf/ft, Fi = 270.6 lbf: our sag of the span at rest
    a = Pulley("A", (0.0, 0.0), 3 * 0.0254, Role.DRIVER, speed_rad_s=1750 * math.pi / 30, direction=1)
    b = Pulley("B", (96 * 0.0254, 0.0), 9 * 0.0254, Role.DRIVEN, power_w=1000.0)
    m = 0.3931 * LBF / 0.3048 / 9.80665
    belt = Belt(mass_per_length_kg_m=m, friction=0.8, tensioning="constant", install_tension_n=270.6 * LBF)
    res = analyse(Drive({"A": a, "B": b}, (Loop("V", ("A", "B"), (1, 1), (Side.INSIDE,) * 2, (False,) * 2, belt),)),
                  Options(gravity=(0.0, -1.0)))
    dyn = res.loops["V"].mechanics.dynamics
    # the spans are 2 deg off level and a little shorter than C: the dip is within 1 %
    assert dyn.static_sag_m / 0.0254 == pytest.approx([0.1395, 0.1395], rel=1e-2)


def _unloaded(v_over_c: float, t0=300.0, m=0.1, tensioning="fixed", gravity=None, length=0.6) -> object:
    # fixed centres, no load: P = T0 - m v^2, T = T0: v/c = v / sqrt(T0/m)
    v = v_over_c * math.sqrt(t0 / m)
    a = Pulley("A", (0.0, 0.0), 0.05, Role.DRIVER, speed_rad_s=v / 0.05, direction=1)
    b = Pulley("B", (length, 0.0), 0.05, Role.IDLER)
    belt = Belt(mass_per_length_kg_m=m, friction=0.3, install_tension_n=t0, tensioning=tensioning)
    d = Drive({"A": a, "B": b}, (Loop("V", ("A", "B"), (1, 1), (Side.INSIDE,) * 2, (False,) * 2, belt),))
    return analyse(d, Options(gravity=gravity))


def test_near_critical_threshold():
    # default threshold 0.7 (our choice, see physics.analysis.NEAR_CRITICAL)
    assert "near-critical" not in [f.code for f in _unloaded(0.65).findings]
    res = _unloaded(0.75)
    f = next(f for f in res.findings if f.code == "near-critical")
    assert f.data["v_over_c"] == pytest.approx(0.75, rel=1e-9)
    # the string's frequency there is P/(2L sqrt(mT)) = f0 (1 - (v/c)^2) under T = T0
    dyn = res.loops["V"].mechanics.dynamics
    L = 0.6
    f0 = math.sqrt(300.0 / 0.1) / (2 * L)
    assert dyn.frequencies_hz[0, 0, 0] == pytest.approx(f0 * (1 - 0.75**2), rel=1e-9)


def test_sag_finding_and_value():
    # a long, slack-ish span under gravity: the report's sag is the catenary's with H = P
    res = _unloaded(0.2, t0=20.0, m=0.3, gravity=(0.0, -1.0), length=3.0)
    dyn = res.loops["V"].mechanics.dynamics
    P = res.loops["V"].mechanics.quasi_static_n[0, 0]
    chord = res.loops["V"].geometry.span_end_m[0] - res.loops["V"].geometry.span_start_m[0]
    assert dyn.sag_m[0] == pytest.approx(sp.catenary_sag(chord, [0, -1], 0.3 * 9.80665, P), rel=1e-12)
    assert dyn.sag_m[0] == pytest.approx(0.3 * 9.80665 * 3.0**2 / (8 * P), rel=2e-2)      # parabola, small sag
    assert "sag" in [f.code for f in res.findings]
    assert dyn.static_sag_m[0] < dyn.sag_m[0]          # at rest P = T0 is higher than running P


def test_sag_fields_in_the_report(tmp):
    from conftest import add_drive, new_doc, save
    from test_findings import run_cli
    doc = new_doc("mm")
    add_drive(doc.modelspace(), [(0.0, 0.0), (2000.0, 600.0)], [80.0, 80.0], [1, 1], "polyline")
    path = save(doc, tmp)
    (tmp / "drive.spanwise.toml").write_text('gravity = [0, -1]\n[belt]\nmass_per_length = "0.2 kg/m"\n'
                                             'friction = 0.3\ninstall_tension = "150 N"\n')
    r = run_cli("check", path, "--json", tmp / "r.json")
    assert r.returncode == 0, r.stderr
    import json
    span = json.loads((tmp / "r.json").read_text())["loops"][0]["spans"][0]
    # inclined span at rest, no speed source: catenary and parabola agree for small sag.
    # The sag is the deflection square to the chord (derived: the load square to the chord is
    # w cos(beta), so the offset square to it is w cos(beta) L^2 / 8P); equal pulleys, so the
    # span is parallel to the line of centres: cos(beta) = 2000 / hypot(2000, 600) = 0.957826
    L = span["length_m"]
    cosb = 2000.0 / math.hypot(2000.0, 600.0)
    assert span["static_parabolic_sag_m"] == pytest.approx(0.2 * 9.80665 * cosb * L**2 / (8 * 150.0), rel=1e-12)
    assert span["static_sag_m"] == pytest.approx(span["static_parabolic_sag_m"], rel=1e-2)
    assert span["sag_ratio"] == pytest.approx(span["sag_m"] / L)
