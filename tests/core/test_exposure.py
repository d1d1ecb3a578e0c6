"""High exposure named with what to do: auc-high, auc-toxic, trough-high, peak-high (exposure.py).

Outside sources: steady-state AUC24 = daily dose / CL and the infusion steady-state trough
(standard equations, pk-sources.md 2.3); vancomycin AUC24 400-600 (Rybak 2020, confirmed),
nephrotoxicity from AUC0-24 >= 677 and AUC predictive up to 600-800 (Zasowski 2017, confirmed),
AKI odds above 20 mg/L (pk-sources.md 3.2, confirmed); gentamicin trough < 2 mg/L (KDIGO 2012;
Bauer, confirmed text).
"""

from __future__ import annotations

import json
import math

import pytest

from casedata import SAMPLES

from tdmtui.core.compute import compute_raw
from tdmtui.core.regimen.exposure import exposure_alerts, unresolved
from tdmtui.core.library import Rules, protocol_from_tree

CODES = ("auc-high", "auc-toxic", "trough-high", "peak-high")


def _sample(name):
    return json.loads((SAMPLES / name).read_text("utf-8"))


def _hits(out, code):
    return [a for a in out.alerts if a.code == code]


def _number_after(text, words):
    tail = text.split(words, 1)[1].split()[0]
    return float(tail)


def test_gentamicin_trough_of_6_2_is_named_with_hold_and_redraw():
    out = compute_raw(_sample("gent-high-trough.json"))
    (a,) = _hits(out, "trough-high")
    assert (a.severity, a.field) == ("caution", "levels[0].conc")
    assert "measured trough 6.2 mg/L" in a.message
    # the levels were made with ke 0.07 /h, V 22 L (sample_cases/README.md); the steady-state trough of
    # 120 mg q8h over 0.5 h by the infusion equations (pk-sources.md 2.3):
    ke, v, dose, tau, tinf = 0.07, 22.0, 120.0, 8.0, 0.5
    cmax = dose / tinf * (1 - math.exp(-ke * tinf)) / (ke * v * (1 - math.exp(-ke * tau)))
    cmin = cmax * math.exp(-ke * (tau - tinf))
    assert cmin == pytest.approx(7.39, abs=0.01)
    assert _number_after(a.message, "predicted steady-state trough") == pytest.approx(cmin, abs=0.15)
    # 6.2 >= 1.5 x 2 mg/L and SCr rose 1.0 -> 1.6 mg/dL in 24 h: a hold, not a redesign
    for words in ("hold the next dose", "redraw a level", "below 2 mg/L", "reassess renal function"):
        assert words in a.message
    assert not _hits(out, "auc-high") and not _hits(out, "auc-toxic")


def test_vancomycin_auc_of_1136_is_toxic_and_says_hold():
    out = compute_raw(_sample("vanc-high-auc.json"))
    (a,) = _hits(out, "auc-toxic")
    # made with ke 0.048 /h, V 55 L: CL 2.64 L/h; AUC24 = 3000 mg/day / 2.64 L/h = 1136 (pk-sources.md 2.3)
    assert _number_after(a.message, "AUC24") == pytest.approx(3000 / (0.048 * 55), rel=0.02)
    for words in ("hold the next dose", "redraw a level", "reassess renal function"):
        assert words in a.message
    assert not _hits(out, "auc-high")  # the toxic line replaces the high one
    (t,) = _hits(out, "trough-high")
    assert "34.5 mg/L" in t.message and "20 mg/L" in t.message and "hold the next dose" in t.message


def test_vancomycin_auc_703_is_high_not_toxic_and_settled_by_the_proposal():
    # W5 (pk-sources.md 5): AUC24 about 703 mg*h/L, above 600 (Rybak 2020), under the 800 toxic line
    out = compute_raw(_sample("vanc-steady-state.json"))
    holds, corrections = exposure_alerts(_ctx_of(out), out.estimates[out.result["method"]])
    assert holds == []
    (a,) = [x for x in corrections if x.code == "auc-high"]
    assert _number_after(a.message, "AUC24") == pytest.approx(703, abs=5)
    assert "lower the dose" in a.message and "600" in a.message
    # the proposal is predicted inside 400-600, and the plan states the current regimen's 703 beside it:
    # the caution would not change what the pharmacist does, so it is not raised
    reg = out.result["regimen"]
    assert reg["action"] != "continue" and 400 <= reg["predicted"]["auc24_mg_h_per_l"] <= 600
    assert not [x for x in out.alerts if x.code in CODES]
    # had the proposal been to continue, or been withheld, it stands
    targets = _ctx_of(out).targets
    assert unresolved([a], {**reg, "action": "continue"}, targets, out.rules) == [a]
    assert unresolved([a], None, targets, out.rules) == [a]
    assert unresolved([a], {**reg, "predicted": {"auc24_mg_h_per_l": 640.0}}, targets, out.rules) == [a]


def _ctx_of(out):
    from tdmtui.core.compute import regimen_input, regimen_targets
    from tdmtui.core.estimation.context import MethodContext
    from tdmtui.core.course.history import current_regimen, usable_levels

    case, rules = out.case, out.rules
    cur, _ = current_regimen(case, rules)
    base = regimen_input(case, rules, out.renal, out.history, cur, None)
    return MethodContext(case, rules, out.renal, out.history, usable_levels(case, rules), cur, regimen_targets(base))


def test_small_trough_excess_is_met_by_the_redesign_not_a_hold():
    # W3 (pk-sources.md 5): trough 2.2 mg/L on 120 mg q8h, stable SCr: the textbook answer is a longer
    # interval (Sawchuk-Zaske redesign, Bauer); 2.2 < 1.5 x 2 mg/L, so no hold
    out = compute_raw(_sample("gent-peak-trough.json"))
    holds, corrections = exposure_alerts(_ctx_of(out), out.estimates[out.result["method"]])
    assert holds == []
    (a,) = corrections
    assert a.code == "trough-high" and "lengthen the interval" in a.message and "hold" not in a.message
    assert out.result["regimen"]["predicted"]["trough_mg_per_l"] < 2.0
    assert "trough-high" not in [x.code for x in out.alerts]  # settled by the proposal (1.62 mg/L)


def test_lines_are_library_data_with_their_source():
    r = Rules("vancomycin")
    assert r.value("exposure.auc24_toxic") == 800.0 and "Zasowski 2017" in r.citation("exposure.auc24_toxic")
    assert r.value("exposure.trough_high_mg_l") == 20.0 and "20 mg/L" in r.citation("exposure.trough_high_mg_l")
    assert "exposure.auc24_toxic" not in Rules("gentamicin")


def test_a_local_protocol_moves_the_toxic_line():
    proto = protocol_from_tree({"vancomycin": {"exposure": {"auc24_toxic": {"value": 1200.0, "source": "local"}}}}, "x")
    out = compute_raw(_sample("vanc-high-auc.json"), protocol=proto)
    assert not _hits(out, "auc-toxic")
    holds, corrections = exposure_alerts(_ctx_of(out), out.estimates[out.result["method"]])
    assert "auc-high" in [a.code for a in corrections]


def test_measured_peak_far_above_target_is_named():
    # gentamicin peak 16 mg/L, 30 min after a 30-min infusion: above 1.5 x the 10 mg/L upper target
    # (KDIGO 2012 peak 8 +- 2; 1.5 x is the library's design choice)
    raw = _sample("gent-peak-trough.json")
    raw["levels"][0]["conc"] = "16 mg/L"
    out = compute_raw(raw)
    _, corrections = exposure_alerts(_ctx_of(out), out.estimates[out.result["method"]])
    (a,) = [x for x in corrections if x.code == "peak-high"]
    assert a.field == "levels[0].conc" and "16 mg/L" in a.message and "lower the dose" in a.message


@pytest.mark.parametrize("name", ["amikacin.json", "tobra-us-units.json", "vanc-obese.json", "vanc-late-dose.json",
                                  "gent-new-start.json", "vanc-below-loq.json"])
def test_quiet_on_exposure_within_limits(name):
    # each of these is predicted within its band: vanc-obese 535, vanc-late-dose 595 (< 600, Rybak 2020);
    # the aminoglycoside troughs under 2 mg/L (KDIGO 2012)
    out = compute_raw(_sample(name))
    assert [a.code for a in out.alerts if a.code in CODES] == []


def test_nomogram_option_is_not_second_guessed_by_the_prediction():
    # W6 (pk-sources.md 5): 4.2 mg/L at 9 h reads q24h on the Hartford chart; the one-level Bayesian
    # prediction beside it is not turned into a hold
    out = compute_raw(_sample("gent-extended.json"))
    assert [a.code for a in out.alerts if a.code in CODES] == []
