"""Targets and their sources; the hand-over timing rules; next levels.

Guideline numbers: vancomycin AUC24 400-600 mg*h/L at MIC 1 mg/L (2020 consensus guideline,
pk-sources.md 3.1); gentamicin/tobramycin peak 8 +- 2 mg/L and amikacin 20 +- 5 (KDIGO 2012,
pk-sources.md 4.1); gram-positive synergy peak 3-5, trough < 1 (pk-sources.md 4.1, from memory);
extended-interval AUC24 70-100 and Cmin < 1 (pk-sources.md 4.3).
"""

from __future__ import annotations

import pytest

from tdmtui.core.input.casetypes import Target
from tdmtui.core.models import DoseArrays, PKParams
from tdmtui.core.regimen import CurrentRegimen, design
from tdmtui.core.regimen.handover import align
from tdmtui.core.regimen.targets import resolve_targets

from regimen_cases import CLOCK, T0, inp, rules


def test_library_targets() -> None:
    t = resolve_targets(rules("vancomycin"), Target(), "auc")
    assert t.auc24 == (400.0, 600.0) and t.sources["auc24"] == "library"  # 2020 guideline
    assert t.trough is None  # no trough ceiling by default
    t = resolve_targets(rules("gentamicin"), Target(), "peak-trough")
    assert t.peak == (6.0, 10.0) and t.trough == (0.0, 2.0)  # KDIGO 2012: 8 +- 2; trough < 2
    t = resolve_targets(rules("amikacin"), Target(), "peak-trough")
    assert t.peak == (15.0, 25.0)  # KDIGO 2012: 20 +- 5
    t = resolve_targets(rules("gentamicin"), Target(), "extended")
    assert t.auc24 == (70.0, 100.0) and t.trough_ceiling == 1.0  # pk-sources.md 4.3
    t = resolve_targets(rules("vancomycin"), Target(), "continuous")
    assert t.css == (20.0, 25.0) and t.auc24 == (480.0, 600.0)  # Css x 24 (pk-sources.md 2.5, 3.1)


def test_case_and_protocol_override_with_source() -> None:
    t = resolve_targets(rules("vancomycin"), Target(auc24=(450.0, 550.0)), "auc")
    assert t.auc24 == (450.0, 550.0) and t.sources["auc24"] == "case" and t.main_source == "case"
    t = resolve_targets(rules("vancomycin", targets__auc24=[400.0, 550.0], targets__trough_ceiling=15.0),
                        Target(), "auc")
    assert t.auc24 == (400.0, 550.0) and t.sources["auc24"] == "protocol"
    assert t.trough == (0.0, 15.0) and t.sources["trough"] == "protocol"


def test_indication_variant() -> None:
    t = resolve_targets(rules("gentamicin"), Target(indication="gram-positive synergy"), "peak-trough")
    assert t.peak == (3.0, 5.0) and t.trough == (0.0, 1.0)  # synergy 3-5 / < 1 (pk-sources.md 4.1)


@pytest.mark.parametrize("ref,tinf,expected", [("start+1h", 0.5, 1.0), ("start+1h", 1.0, 1.0),
                                               ("start+1h", 1.5, 1.5), ("end", 0.5, 0.5), ("end+1h", 1.5, 2.5)])
def test_peak_reference_time(ref: str, tinf: float, expected: float) -> None:
    """Peaks compared like with like: 1 h after the start equals the end of a 1-h infusion
    or 0.5 h after a 0.5-h one (pk-sources.md 2.4, confirmed-secondary)."""
    t = resolve_targets(rules("gentamicin", targets__peak_reference=ref), Target(), "peak-trough")
    assert t.peak_time(tinf) == expected


def test_align_to_admin_times() -> None:
    t = CLOCK.parse("2026-03-01T13:10", "t")
    assert CLOCK.format(align(t, ["08:00", "20:00"], CLOCK)) == "2026-03-01T20:00"
    t = CLOCK.parse("2026-03-01T21:00", "t")
    assert CLOCK.format(align(t, ["08:00", "20:00"], CLOCK)) == "2026-03-02T08:00"
    assert align(t, [], CLOCK) == t


def test_continue_when_on_target_keeps_the_schedule() -> None:
    """W5 patient (CL 4.27 L/h) on 1000 mg q12h: AUC24 469 is in 400-600 -> continue."""
    params = PKParams.one_compartment(0.0827, 51.6)
    hist = DoseArrays.regimen(T0, 1000.0, 12.0, 1.0, 6)
    last = float(hist.start[-1])
    reg = design(inp("vancomycin", params, hist, as_of=last + 3.0,
                     current=CurrentRegimen(1000.0, 12.0, 1.0))).regimen
    assert reg["action"] == "continue"
    assert reg["next_dose_at"] == CLOCK.format(last + 12.0)
    assert reg["hold_until"] is None and reg["loading_dose"] is None
    assert reg["alternatives"] and all(a["action"] != "continue" for a in reg["alternatives"])


def test_next_levels_per_method() -> None:
    """Two-level: peak 1 h after the end of the 3rd dose, trough 30 min before the 4th
    (pk-sources.md 3.1); Bayesian: one trough before the 2nd dose."""
    params = PKParams.one_compartment(0.0827, 51.6)
    hist = DoseArrays.regimen(T0, 1500.0, 12.0, 1.5, 6)
    last = float(hist.start[-1])
    base = dict(as_of=last + 12.5, current=CurrentRegimen(1500.0, 12.0, 1.5))
    reg = design(inp("vancomycin", params, hist, method="two-level", **base)).regimen
    first = CLOCK.parse(reg["next_dose_at"], "t")
    tau, tinf = reg["interval_h"], reg["infusion_h"]
    peak, trough = reg["next_levels"]
    assert peak["kind"] == "peak" and CLOCK.parse(peak["at"], "t") == pytest.approx(first + 2 * tau + tinf + 1.0)
    assert trough["kind"] == "trough" and CLOCK.parse(trough["at"], "t") == pytest.approx(first + 3 * tau - 0.5)
    assert "dose 4" in trough["dose"]
    reg = design(inp("vancomycin", params, hist, method="bayesian", **base)).regimen
    (only,) = reg["next_levels"]
    assert only["kind"] == "trough" and "dose 2" in only["dose"]


def test_no_estimate_gives_no_regimen_with_a_reason() -> None:
    plan = design(inp("vancomycin", None))
    assert plan.regimen is None and [a.code for a in plan.alerts] == ["regimen-no-estimate"]


def test_extended_excluded_falls_back_to_traditional() -> None:
    """CrCl < 20 mL/min excludes extended-interval dosing (pk-sources.md 4.3 usual exclusions)."""
    plan = design(inp("gentamicin", PKParams.one_compartment(0.05, 20.0), crcl_ml_min=15.0))
    assert plan.regimen["mode"] == "peak-trough"
    assert "extended-excluded" in [a.code for a in plan.alerts]


def test_protocol_example_names_only_real_keys() -> None:
    """docs/protocol-example.toml: every key it overrides exists in the library (no typos),
    except the nomogram lines the library deliberately lacks (pk-sources.md 4.3)."""
    from pathlib import Path

    from tdmtui.core.library import Rules, load_protocol

    proto = load_protocol(Path(__file__).resolve().parents[2] / "docs" / "protocol-example.toml")
    only_local = {"nomogram.q36_line", "nomogram.q48_line", "nomogram.q36_shape_confirmed",
                  "nomogram.q48_shape_confirmed"}
    for section, flat in proto.overrides.items():
        lib = Rules("vancomycin" if section == "common" else section)
        for key in flat:
            if key in only_local:
                continue
            assert key in lib, f"{section}.{key}"
            assert Rules(lib.drug, proto).source(key) == "protocol"


def test_overdue_dose_is_flagged_and_never_scheduled_in_the_past() -> None:
    params = PKParams.one_compartment(0.0827, 51.6)
    hist = DoseArrays.regimen(T0, 1000.0, 12.0, 1.0, 6)
    as_of = float(hist.start[-1]) + 15.0  # the 12 h dose is 3 h late
    plan = design(inp("vancomycin", params, hist, as_of=as_of, current=CurrentRegimen(1000.0, 12.0, 1.0)))
    assert plan.regimen["action"] == "continue"
    assert "dose-overdue" in [a.code for a in plan.alerts]
    assert CLOCK.parse(plan.regimen["next_dose_at"], "t") >= as_of - 1.0 / 120.0
