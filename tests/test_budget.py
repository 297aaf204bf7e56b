"""Power budget along a lossy line (deembed.physics.budget) against the field's worked examples.

Sources are named beside each expected value, with the provenance tags of
/work/shared/reference/check-values.md ([D] derived from the named formula, [M] from memory).
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from deembed.physics.budget import antenna_swr_from_measured, power_budget
from deembed.base.errors import OptionError
from deembed.physics.rf import gamma_from_z, gamma_mag_from_swr, mismatch_loss_db, return_loss_db, swr

# --------------------------------------------------------------------------- SWR table (F2-F4)

# (SWR, |Gamma|, RL dB, reflected %, mismatch loss dB): [D] check-values "SWR table", from F2-F4
SWR_TABLE = [
    (1.1, 0.04762, 26.444, 0.227, 0.0099),
    (1.2, 0.09091, 20.828, 0.826, 0.0360),
    (1.5, 0.2, 13.979, 4.000, 0.1773),
    (2.0, 0.33333, 9.542, 11.111, 0.5115),
    (2.5, 0.42857, 7.360, 18.367, 0.8814),
    (3.0, 0.5, 6.021, 25.000, 1.2494),
    (4.0, 0.6, 4.437, 36.000, 1.9382),
    (5.0, 0.66667, 3.522, 44.444, 2.5527),
    (10, 0.81818, 1.743, 66.942, 4.8073),
]


@pytest.mark.parametrize("s, gmag, rl, refl_pct, mml", SWR_TABLE)
def test_swr_table_rows_through_a_lossless_line(s, gmag, rl, refl_pct, mml):
    # With ML = 0 the budget's transmitter end sees the antenna itself:
    # [D] check-values SWR table, from F2 (Pozar eq. 2.41), F3 (eq. 2.38), F4 (Sec. 2.3) [M].
    b = power_budget(100.0, 0.0, gamma_mag_from_swr(s))
    tx, ant = b["at_transmitter"], b["at_antenna"]
    assert tx["gamma_mag"] == pytest.approx(gmag, abs=5e-6)
    assert tx["swr"] == pytest.approx(s, rel=1e-9)
    assert tx["return_loss_db"] == pytest.approx(rl, abs=5e-4)
    assert tx["reflected_w"] == pytest.approx(refl_pct, abs=5e-4)  # of 100 W, so W = %
    # delivered power short of 100 W is the mismatch loss
    assert -10 * math.log10(ant["delivered_w"] / 100.0) == pytest.approx(mml, abs=5e-5)
    assert float(mismatch_loss_db(gmag)) == pytest.approx(mml, abs=5e-4)
    assert b["line"]["dissipated_w"] == pytest.approx(0.0, abs=1e-12)


# --------------------------------------------------------------------------- E5 (F8, F9)

# (ML dB, SWR_L, total loss dB, added dB, |Gamma_in|, SWR_in, RL_in dB): [D] check-values E5, from F8/F9
E5 = [
    (1.0, 3, 1.5039, 0.5039, 0.39716, 2.3177, 8.0206),
    (1.0, 2, 1.1959, 0.1959, 0.26478, 1.7203, 11.5424),
    (3.0, 3, 3.9677, 0.9677, 0.25059, 1.6688, 12.0206),
    (0.5, 5, 1.1615, 0.6615, 0.59417, 3.9281, 4.5218),
    (2.0, 10, 5.4612, 3.4612, 0.51624, 3.1343, 5.7430),
]


@pytest.mark.parametrize("ml, s_l, tl, added, g_in, s_in, rl_in", E5)
def test_e5_total_loss_and_input_swr(ml, s_l, tl, added, g_in, s_in, rl_in):
    # [D] check-values E5 (F9 total loss: ARRL Antenna Book, from memory; F8: Gamma_in = Gamma_L / a)
    b = power_budget(100.0, ml, gamma_mag_from_swr(s_l))
    m, tx = b["matched_at_transmitter"], b["at_transmitter"]
    assert m["total_loss_db"] == pytest.approx(tl, abs=5e-5)
    assert m["additional_loss_db"] == pytest.approx(added, abs=5e-5)
    assert tx["gamma_mag"] == pytest.approx(g_in, abs=5e-6)
    assert tx["swr"] == pytest.approx(s_in, abs=5e-5)
    assert tx["return_loss_db"] == pytest.approx(rl_in, abs=5e-5)


def test_e5_as_one_broadcast_call():
    # same rows, vectorised: arrays in, arrays out ([D] check-values E5)
    ml = np.array([r[0] for r in E5])
    g = gamma_mag_from_swr(np.array([r[1] for r in E5], dtype=float))
    b = power_budget(100.0, ml, g)
    assert isinstance(b["matched_at_transmitter"]["total_loss_db"], np.ndarray)
    np.testing.assert_allclose(b["matched_at_transmitter"]["total_loss_db"], [r[2] for r in E5], atol=5e-5)
    np.testing.assert_allclose(b["at_transmitter"]["swr"], [r[5] for r in E5], atol=5e-5)


# --------------------------------------------------------------------------- E6 (F10)

def test_e6_power_budget():
    # Pf = 100 W, ML = 1 dB, SWR_L = 3: [D] check-values E6, from F10
    b = power_budget(100.0, 1.0, gamma_mag_from_swr(3.0))
    assert isinstance(b["at_transmitter"]["reflected_w"], float)  # scalars in, Python floats out
    assert b["at_transmitter"]["reflected_w"] == pytest.approx(15.774, abs=5e-4)  # [D] E6
    assert b["at_transmitter"]["net_w"] == pytest.approx(84.226, abs=5e-4)  # [D] E6 P_in
    assert b["at_antenna"]["delivered_w"] == pytest.approx(59.575, abs=5e-4)  # [D] E6 P_load
    assert b["line"]["dissipated_w"] == pytest.approx(24.651, abs=5e-4)  # [D] E6
    assert b["matched_at_transmitter"]["total_loss_db"] == pytest.approx(1.5039, abs=5e-5)  # [D] E6 = E5 row 1
    # forward at the antenna is Pf / a ([D] F8/F10) and a quarter of it comes back (|Gamma_L|^2 = 0.25)
    assert b["at_antenna"]["forward_w"] == pytest.approx(100 / 10 ** 0.1, rel=1e-12)
    assert b["at_antenna"]["reflected_w"] == pytest.approx(0.25 * 100 / 10 ** 0.1, rel=1e-12)


# --------------------------------------------------------------------------- E2 (ML = 0)

def test_e2_transmitter_into_mismatched_antenna():
    # antenna 80 + j40 ohm on 50 ohm, 30 W: [D] check-values E2 (Pozar 4th ed. ch. 2 problem, number [M])
    g = gamma_from_z(80 + 40j)
    b = power_budget(30.0, 0.0, g)
    assert b["at_antenna"]["gamma_mag"] == pytest.approx(0.36761, abs=5e-6)  # [D] E2
    assert b["at_antenna"]["delivered_w"] == pytest.approx(25.946, abs=5e-4)  # [D] E2 P_L
    assert b["at_transmitter"]["return_loss_db"] == pytest.approx(8.692, abs=5e-4)  # [D] E2 RL
    assert b["at_antenna"]["swr"] == pytest.approx(2.1626, abs=5e-5)  # [D] E2
    # a lossless line with a matching unit delivers everything: TL = 0 (F9 with a = 1)
    assert b["matched_at_transmitter"]["delivered_w"] == pytest.approx(30.0, abs=1e-9)


# --------------------------------------------------------------------------- trade figure

def test_two_to_one_behind_one_and_a_quarter_db_line():
    # 2:1 at the antenna behind a 1.25 dB matched-loss line reads about 1.67:1 and ~12 dB return
    # loss at the transmitter: common practice, no source (RL_in = RL_L + 2 ML, [D] check-values F8)
    b = power_budget(100.0, 1.25, gamma_mag_from_swr(2.0))
    assert b["at_transmitter"]["swr"] == pytest.approx(1.67, abs=0.01)
    assert b["at_transmitter"]["return_loss_db"] == pytest.approx(12.0, abs=0.1)
    # and back again
    assert antenna_swr_from_measured(b["at_transmitter"]["swr"], 1.25) == pytest.approx(2.0, abs=1e-9)


# --------------------------------------------------------------------------- invariants

def test_absorbed_case_conserves_power():
    # energy conservation: net power into the line = delivered + dissipated, and the line only
    # dissipates (>= 0); reflected at the antenna = forward there - delivered (common practice, no source)
    rng = np.random.default_rng(20240611)
    p = rng.uniform(1, 1500, 200)
    ml = rng.uniform(0, 6, 200)
    g = rng.uniform(0, 1, 200) * np.exp(1j * rng.uniform(-np.pi, np.pi, 200))
    b = power_budget(p, ml, g)
    tx, ant, line = b["at_transmitter"], b["at_antenna"], b["line"]
    np.testing.assert_allclose(tx["forward_w"] - tx["reflected_w"], tx["net_w"], rtol=1e-12)
    np.testing.assert_allclose(tx["net_w"], ant["delivered_w"] + line["dissipated_w"], rtol=1e-12)
    np.testing.assert_allclose(ant["forward_w"] - ant["reflected_w"], ant["delivered_w"], rtol=1e-12)
    assert np.all(line["dissipated_w"] >= -1e-9)
    m = b["matched_at_transmitter"]
    np.testing.assert_allclose(m["delivered_w"] + m["dissipated_w"], p, rtol=1e-12)
    assert np.all(m["additional_loss_db"] >= -1e-12)  # a mismatch never lowers the loss (F9)


def test_retuned_case_agrees_with_the_wave_picture():
    # With the matching unit re-reflecting, the line's forward wave at the transmitter end is
    # P / (1 - |Gamma_in|^2) and the antenna gets that / a * (1 - |Gamma_L|^2): Pozar 4th ed. Sec. 2.7
    # "the terminated lossy line" [M]; this must equal P 10^(-TL/10) with F9's TL.
    rng = np.random.default_rng(7)
    ml = rng.uniform(0.1, 5, 50)
    gl = rng.uniform(0, 0.95, 50)
    a = 10 ** (ml / 10)
    expected = 100 / (1 - (gl / a) ** 2) / a * (1 - gl ** 2)
    np.testing.assert_allclose(power_budget(100.0, ml, gl)["matched_at_transmitter"]["delivered_w"],
                               expected, rtol=1e-12)


def test_input_reflection_matches_scikit_rf_line():
    # independent path: scikit-rf line of 1 dB matched loss terminated in Gamma_L; |S11| is |Gamma_in|
    import skrf
    from skrf.media import DefinedGammaZ0

    fr = skrf.Frequency.from_f([3.6e6, 14.2e6, 28.5e6], unit="Hz")
    alpha_np_per_m = 1.0 / (20 * math.log10(math.e)) / 30.0  # 1 dB over 30 m
    beta = 2 * np.pi * fr.f / (0.66 * 299_792_458.0)
    media = DefinedGammaZ0(fr, z0=50, gamma=alpha_np_per_m + 1j * beta)
    g_l = 0.5 * np.exp(0.7j)
    net = media.line(30.0, unit="m") ** media.load(g_l)
    b = power_budget(100.0, 1.0, g_l)
    np.testing.assert_allclose(np.abs(net.s[:, 0, 0]), b["at_transmitter"]["gamma_mag"], rtol=1e-9)


def test_not_passive_antenna_gives_nan_not_nonsense():
    # |Gamma_L| > 1 cannot come from a passive antenna: NaN, not negative delivered power
    b = power_budget(100.0, 1.0, np.array([0.5, 1.02]))
    assert np.isfinite(b["at_antenna"]["delivered_w"][0])
    assert np.isnan(b["at_antenna"]["delivered_w"][1])
    assert np.isnan(b["matched_at_transmitter"]["delivered_w"][1])


def test_bad_power_and_loss_raise_option_errors():
    # the library names the quantity; the command line maps it to its option (test_bad_input)
    with pytest.raises(OptionError, match="^power:") as e:
        power_budget(0.0, 1.0, 0.3)
    assert e.value.field == "power" and e.value.render({"power": "--power"}).startswith("--power:")
    with pytest.raises(OptionError, match="^loss:"):
        power_budget(100.0, -1.0, 0.3)


# --------------------------------------------------------------------------- antenna SWR from a reading

@pytest.mark.parametrize("ml, s_l, tl, added, g_in, s_in, rl_in", E5)
def test_antenna_swr_from_measured_inverts_e5(ml, s_l, tl, added, g_in, s_in, rl_in):
    # [D] check-values E5: SWR_in read at the transmitter gives SWR_L back (tolerance from E5's 5 digits)
    assert antenna_swr_from_measured(s_in, ml) == pytest.approx(s_l, rel=2e-4)


def test_antenna_swr_from_measured_vectorised():
    out = antenna_swr_from_measured(np.array([1.7203, 2.3177]), 1.0)  # [D] check-values E5 rows 1-2
    np.testing.assert_allclose(out, [2.0, 3.0], rtol=2e-4)


def test_reading_too_good_for_the_line_loss_is_refused():
    # 1.5:1 (|Gamma| 0.2) behind 5 dB of loss would need |Gamma_L| = 0.2 * 10^0.5 = 0.63 (fine);
    # behind 8 dB it would need 0.2 * 10^0.8 = 1.26 > 1 ([D] check-values F8): impossible
    assert antenna_swr_from_measured(1.5, 5.0) == pytest.approx(float(swr(0.2 * 10 ** 0.5)), rel=1e-12)
    with pytest.raises(OptionError) as e:
        antenna_swr_from_measured(1.5, 8.0)
    assert e.value.field == "measured_swr"
    assert "line loss is larger than the reading allows" in e.value.reason
    with pytest.raises(OptionError, match="^measured_swr:"):
        antenna_swr_from_measured(0.9, 1.0)


def test_return_loss_helper_consistent_with_e5():
    # RL_in = RL_L + 2 ML ([D] check-values F8): 3:1 behind 1 dB -> 6.0206 + 2 = 8.0206 dB (E5 row 1)
    rl = float(return_loss_db(gamma_mag_from_swr(3.0))) + 2 * 1.0
    assert rl == pytest.approx(8.0206, abs=5e-5)
