"""Implementation forms in the design JSON (synth.implementation).

External references, named beside each check:
scipy.signal.cont2discrete (methods 'bilinear' and 'zoh'), scipy.signal.freqz,
scipy.signal.freqresp, scipy.signal.dstep, numpy.roots; K. J. Astrom and
T. Hagglund, "PID Controllers: Theory, Design and Tuning", 2nd ed., ISA, 1995
(relations between the parallel and standard forms), from memory; G. F.
Franklin, J. D. Powell and M. L. Workman, "Digital Control of Dynamic
Systems", 3rd ed., 1998 (Tustin with pre-warping), from memory; common
practice of the trade (sample 10 to 30 times faster than the closed-loop
bandwidth).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from handmade import hand_design
from scipy.signal import cont2discrete, dstep, freqresp, freqz

from synth.errors import OptionError
from synth.outputs.implementation import add_implementation_forms, implementation_lines

# -- hand-built design documents -----------------------------------------------------------------


_design = hand_design


def _doc(plant_num, plant_den, designs, **plant_extra):
    plant = {"numerator": list(map(float, plant_num)), "denominator": list(map(float, plant_den))}
    plant.update(plant_extra)
    return {"schema": "synth.design/1", "plant": plant, "designs": designs}


# a lead compensator on a double integrator: C = 10 (s + 1)/(s + 10), G = 1/s^2
G2 = ([1.0], [1.0, 0.0, 0.0])
LEAD = ([10.0, 10.0], [1.0, 10.0])


def _lead_doc():
    return _doc(*G2, [_design(1, "lead", *LEAD, *G2)])


def _std_pid_tf(kc, ti, td, n):
    """Kc (1 + 1/(Ti s) + Td s / ((Td/N) s + 1)) as num/den, expanded by numpy."""
    tf = td / n
    num = kc * np.polyadd(np.polyadd(np.polymul([ti, 0.0], [tf, 1.0]), [tf, 1.0]),
                          np.polymul([ti * td, 0.0], [1.0, 0.0]))
    den = np.polymul([ti, 0.0], [tf, 1.0])
    return num / den[0], den / den[0]


def _loop_freq(cn, cd, gn, gd, w):
    """L(jw) by scipy.signal.freqresp."""
    _, h = freqresp((np.polymul(cn, gn), np.polymul(cd, gd)), w=np.atleast_1d(w))
    return h


# -- Tustin with pre-warping --------------------------------------------------------------------


def test_warp_frequency_is_the_gain_crossover():
    # |L(j w0)| = 1 at the pre-warping frequency (scipy.signal.freqresp)
    out = add_implementation_forms(_lead_doc(), sample_time=0.05)
    dz = out["designs"][0]["implementation"]["discrete"]
    assert dz["method"] == "tustin-prewarp"
    w0 = dz["warp_frequency"]
    assert abs(abs(_loop_freq(*LEAD, *G2, w0)[0]) - 1.0) < 1e-8


@pytest.mark.parametrize("T", [0.01, 0.05, 0.2])
def test_prewarped_tustin_matches_bilinear_of_frequency_scaled_system(T):
    # scipy.signal.cont2discrete(method='bilinear') maps s -> (2/T)(z-1)/(z+1); on C(a s)
    # with a = w0 T / (2 tan(w0 T / 2)) that is Tustin pre-warped at w0.
    out = add_implementation_forms(_lead_doc(), sample_time=T)
    dz = out["designs"][0]["implementation"]["discrete"]
    w0 = dz["warp_frequency"]
    a = w0 * T / (2.0 * math.tan(w0 * T / 2.0))
    num, den = np.asarray(LEAD[0]), np.asarray(LEAD[1])
    num_s = num * a ** np.arange(num.size - 1, -1, -1)
    den_s = den * a ** np.arange(den.size - 1, -1, -1)
    bn, bd, _ = cont2discrete((num_s, den_s), T, method="bilinear")
    bn = np.ravel(bn) / bd[0]
    bd = np.asarray(bd) / bd[0]
    np.testing.assert_allclose(dz["numerator"], bn, rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(dz["denominator"], bd, rtol=1e-9, atol=1e-12)
    # and the discrete response equals the continuous one at w0 (scipy.signal.freqz)
    _, hd = freqz(dz["numerator"], dz["denominator"], worN=[w0 * T])
    hc = np.polyval(num, 1j * w0) / np.polyval(den, 1j * w0)
    assert abs(hd[0] - hc) < 1e-9 * abs(hc)


def test_difference_equation_reproduces_the_discrete_filter():
    # running the printed recursion equals scipy.signal.dstep of numerator/denominator
    out = add_implementation_forms(_lead_doc(), sample_time=0.05)
    dz = out["designs"][0]["implementation"]["discrete"]
    b, a = dz["difference_equation"]["b"], dz["difference_equation"]["a"]
    e = np.ones(40)
    u = np.zeros(40)
    for k in range(40):
        u[k] = sum(b[i] * e[k - i] for i in range(len(b)) if k - i >= 0) - sum(
            a[i] * u[k - i] for i in range(1, len(a)) if k - i >= 0)
    _, (ref,) = dstep((dz["numerator"], dz["denominator"], 0.05), n=40)
    np.testing.assert_allclose(u, ref.ravel(), rtol=1e-10, atol=1e-10)


# -- sampled loop -----------------------------------------------------------------------------------


def _zoh_closed_loop_roots(cn_d, cd_d, gn, gd, T, delay_samples=0):
    """Closed-loop roots of Cd(z) Gzoh(z) from scipy.signal.cont2discrete and numpy.roots."""
    pn, pd, _ = cont2discrete((gn, gd), T, method="zoh")
    pn = np.trim_zeros(np.ravel(pn), "f")
    pd = np.polymul(np.asarray(pd), np.r_[1.0, np.zeros(delay_samples)])
    char = np.polyadd(np.polymul(cd_d, pd), np.polymul(cn_d, pn))
    return np.roots(char), pn, pd


@pytest.mark.parametrize("T", [0.05, 0.3, 0.9, 1.5])
def test_sampled_loop_verdict_agrees_with_zoh_closed_loop(T):
    out = add_implementation_forms(_lead_doc(), sample_time=T)
    dz = out["designs"][0]["implementation"]["discrete"]
    roots, pn, pd = _zoh_closed_loop_roots(dz["numerator"], dz["denominator"], *G2, T)
    rho = float(np.max(np.abs(roots)))
    sl = dz["sampled_loop"]
    assert sl["stable"] == (rho < 1.0)
    assert sl["spectral_radius"] == pytest.approx(rho, rel=1e-7)
    if sl["stable"]:
        # overshoot at the samples from scipy.signal.dstep of the closed loop
        num = np.polymul(dz["numerator"], pn)
        char = np.polyadd(np.polymul(dz["denominator"], pd), num)
        _, (y,) = dstep((num, char, T), n=4000)
        y = y.ravel()
        final = np.polyval(num, 1.0) / np.polyval(char, 1.0)
        assert sl["overshoot_percent"] == pytest.approx((y.max() - final) / final * 100.0,
                                                        abs=1e-6)
    else:
        assert any("UNSTABLE" in w for w in dz["warnings"])


def test_at_least_one_sample_time_destabilises_the_lead_loop():
    # the continuous design is stable, but a slow enough sampler breaks it (numpy.roots check)
    T = 1.5
    out = add_implementation_forms(_lead_doc(), sample_time=T)
    dz = out["designs"][0]["implementation"]["discrete"]
    roots, _, _ = _zoh_closed_loop_roots(dz["numerator"], dz["denominator"], *G2, T)
    assert np.max(np.abs(roots)) > 1.0
    assert dz["sampled_loop"]["stable"] is False


def test_dead_time_whole_samples_become_poles_at_the_origin():
    # G = 2/(s+1) e^{-0.2 s}, T = 0.1: the ZOH plant is cont2discrete(G) / z^2
    gn, gd = [2.0], [1.0, 1.0]
    pi = _design(1, "PI", [0.5, 0.5], [1.0, 0.0], gn, gd)
    doc = _doc([2.0], [1.0, 1.0], [pi], dead_time=0.2, dead_time_order=3,
               delay_free={"numerator": gn, "denominator": gd})
    T = 0.1
    out = add_implementation_forms(doc, sample_time=T)
    dz = out["designs"][0]["implementation"]["discrete"]
    roots, _, _ = _zoh_closed_loop_roots(dz["numerator"], dz["denominator"], gn, gd, T,
                                         delay_samples=2)
    assert dz["sampled_loop"]["spectral_radius"] == pytest.approx(np.max(np.abs(roots)),
                                                                  rel=1e-7)
    # the crossover comes from L(jw) with the exact delay: |L| = 1 there (freqresp; |e^-jwT| = 1)
    w0 = dz["warp_frequency"]
    assert abs(abs(_loop_freq([0.5, 0.5], [1.0, 0.0], gn, gd, w0)[0]) - 1.0) < 1e-8


# -- sample-rate warning and odd loops ----------------------------------------------------------


def test_sample_rate_warning_against_closed_loop_bandwidth():
    # common practice: sample at 10 to 30 times the closed-loop bandwidth. The bandwidth in the
    # JSON is the -3 dB point of T = L/(1+L) (checked with scipy.signal.freqresp).
    out = add_implementation_forms(_lead_doc(), sample_time=0.05)
    dz = out["designs"][0]["implementation"]["discrete"]
    bw = dz["closed_loop_bandwidth"]
    cn, cd = LEAD
    num = np.polymul(cn, G2[0])
    char = np.polyadd(np.polymul(cd, G2[1]), num)
    _, h = freqresp((num, char), w=[1e-6, bw])
    assert abs(h[1]) == pytest.approx(abs(h[0]) / math.sqrt(2.0), rel=1e-6)
    # 2 pi / 0.05 = 126 rad/s is over 30 times the bandwidth: no warning
    assert 2 * math.pi / 0.05 > 30 * bw
    assert dz["warnings"] == []
    # 2 pi / 0.5 = 12.6 rad/s is under 10 times the bandwidth: a warning
    slow = add_implementation_forms(_lead_doc(), sample_time=0.5)["designs"][0]
    warns = slow["implementation"]["discrete"]["warnings"]
    assert 2 * math.pi / 0.5 < 10 * bw
    assert any(w.startswith("warning") and "bandwidth" in w for w in warns)


def test_crossover_above_nyquist_falls_back_to_plain_tustin():
    # crossover about 1.26 rad/s; T = 3 s puts pi/T = 1.05 rad/s below it
    out = add_implementation_forms(_lead_doc(), sample_time=3.0)
    dz = out["designs"][0]["implementation"]["discrete"]
    assert dz["method"] == "tustin" and dz["warp_frequency"] is None
    assert any("Nyquist" in w for w in dz["warnings"])
    # plain Tustin is scipy.signal.cont2discrete(method='bilinear')
    bn, bd, _ = cont2discrete(LEAD, 3.0, method="bilinear")
    np.testing.assert_allclose(dz["numerator"], np.ravel(bn) / bd[0], rtol=1e-9)


def test_loop_gain_below_one_everywhere_has_no_crossover():
    # C = 0.1 on G = 1/(s+1): |L| <= 0.1 (scipy.signal.freqresp), so no pre-warping
    gn, gd = [1.0], [1.0, 1.0]
    doc = _doc(gn, gd, [_design(1, "P", [0.1], [1.0], gn, gd)])
    _, h = freqresp((gn, gd), w=np.logspace(-4, 4, 200))
    assert np.max(np.abs(0.1 * h)) < 1.0
    out = add_implementation_forms(doc, sample_time=0.1)
    dz = out["designs"][0]["implementation"]["discrete"]
    assert dz["method"] == "tustin" and dz["warp_frequency"] is None
    assert dz["crossover_frequency"] is None
    json.dumps(out, allow_nan=False)  # no NaN or infinity anywhere


# -- PID forms -----------------------------------------------------------------------------------


@pytest.mark.parametrize("kc, ti, td, n", [(2.0, 4.0, 0.5, 10.0), (0.3, 1.5, 0.05, 8.0)])
def test_pid_forms_follow_the_textbook_relations(kc, ti, td, n):
    # Astrom and Hagglund (1995), from memory: Kp = Kc, Ki = Kc/Ti, Kd = Kc Td, Tf = Td/N
    gn, gd = [1.0], [1.0, 3.0, 2.0]
    num, den = _std_pid_tf(kc, ti, td, n)
    out = add_implementation_forms(_doc(gn, gd, [_design(1, "PID", num, den, gn, gd)]))
    im = out["designs"][0]["implementation"]
    par, std = im["parallel"], im["standard"]
    assert par["kp"] == pytest.approx(kc, rel=1e-9)
    assert par["ki"] == pytest.approx(kc / ti, rel=1e-9)
    assert par["kd"] == pytest.approx(kc * td, rel=1e-9)
    assert par["tf"] == pytest.approx(td / n, rel=1e-9)
    assert (std["kc"], std["ti"], std["td"], std["n"]) == pytest.approx((kc, ti, td, n), rel=1e-9)


def test_pi_and_p_forms_and_non_pid_structures():
    gn, gd = [1.0], [1.0, 1.0]
    kc, ti = 1.5, 2.0
    pi_num = [kc, kc / ti]           # Kc (1 + 1/(Ti s)) = (Kc s + Kc/Ti)/s
    designs = [_design(1, "PI", pi_num, [1.0, 0.0], gn, gd),
               _design(2, "P", [3.0], [1.0], gn, gd),
               _design(3, "lead", [4.0, 4.0], [1.0, 8.0], gn, gd)]
    out = add_implementation_forms(_doc(gn, gd, designs))
    pi, p, lead = (d["implementation"] for d in out["designs"])
    # Astrom and Hagglund, from memory: Ki = Kc/Ti; no derivative action means Td = 0
    assert pi["parallel"]["kp"] == pytest.approx(kc) and pi["parallel"]["ki"] == pytest.approx(
        kc / ti)
    assert pi["parallel"]["kd"] == 0.0
    assert pi["standard"]["ti"] == pytest.approx(ti) and pi["standard"]["td"] == 0.0
    assert pi["standard"]["n"] is None  # no filter: unbounded N is null, not infinity
    assert p["parallel"]["kp"] == 3.0 and p["standard"]["ti"] is None
    assert lead["parallel"] is None and lead["standard"] is None
    json.dumps(out, allow_nan=False)


def test_factored_and_polynomial_forms_give_back_the_compensator():
    # the factored text's gain, zeros and poles rebuild the polynomial (numpy.poly)
    out = add_implementation_forms(_lead_doc())
    im = out["designs"][0]["implementation"]
    assert im["factored"] == "10 (s + 1) / (s + 10)"
    assert im["polynomial"]["numerator"] == LEAD[0]
    assert im["polynomial"]["denominator"] == LEAD[1]
    np.testing.assert_allclose(10.0 * np.poly([-1.0]), im["polynomial"]["numerator"])
    np.testing.assert_allclose(np.poly([-10.0]), im["polynomial"]["denominator"])
    assert "discrete" not in im


def test_document_is_not_modified_and_contract_keys_stay():
    doc = _lead_doc()
    before = json.dumps(doc, sort_keys=True)
    out = add_implementation_forms(doc, sample_time=0.1)
    assert json.dumps(doc, sort_keys=True) == before
    for key in doc["designs"][0]:
        assert out["designs"][0][key] == doc["designs"][0][key]
    assert out["schema"] == "synth.design/1"
    json.dumps(out, allow_nan=False)


@pytest.mark.parametrize("bad", [0.0, -1.0, float("nan"), float("inf"), True, "0.1"])
def test_bad_sample_time_is_an_option_error(bad):
    with pytest.raises(OptionError):
        add_implementation_forms(_lead_doc(), sample_time=bad)


def test_terminal_lines_show_forms_of_top_designs():
    gn, gd = [1.0], [1.0, 3.0, 2.0]
    kc, ti, td, n = 2.0, 4.0, 0.5, 10.0
    num, den = _std_pid_tf(kc, ti, td, n)
    designs = [_design(r, "PID", num, den, gn, gd) for r in (1, 2, 3, 4)]
    out = add_implementation_forms(_doc(gn, gd, designs), sample_time=0.01)
    text = "\n".join(implementation_lines(out, sample_time=0.01))
    assert "#1 PID" in text and "#3 PID" in text and "#4" not in text  # top three only
    # the printed gains are the textbook ones (Astrom and Hagglund, from memory)
    assert f"Kp={kc:.6g}" in text and f"Ki={kc / ti:.6g}" in text and f"Kd={kc * td:.6g}" in text
    assert "u[k] =" in text and "sampled loop stable" in text


def test_sampled_loop_says_when_it_is_numerically_marginal():
    # PI 2 + 0.05/s on 1/(100 s + 1): integral action puts the closed loop's static gain at
    # exactly 1 (common practice). While the check does not call itself marginal its final
    # value must be 1 to a millionth; sampled 1e5 times faster than the slow mode, the poles
    # crowd z = 1 and it must say so.
    from synth.outputs.forms import discrete_implementation

    for T in (1.0, 0.1, 0.01):
        loop = discrete_implementation([2.0, 0.05], [1.0, 0.0], [1.0], [100.0, 1.0], T).loop
        assert loop.stable and not loop.marginal
        assert loop.final_value == pytest.approx(1.0, rel=1e-6)
    loop = discrete_implementation([2.0, 0.05], [1.0, 0.0], [1.0], [100.0, 1.0], 0.001).loop
    assert loop.stable and loop.marginal
