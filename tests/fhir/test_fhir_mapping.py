"""FHIR export -> case: what is used, what is not and why (no engine involved).

Expected values are the invented resources' own numbers and the case
contract's strings; unit factors are checked against pint in test_fhir_units.
"""

from __future__ import annotations

import pytest
from fhirdata import LOINC, PATIENT, bundle, data, dose, obs, qty, resources, site_protocol

from tdmtui.core.errors import InputError
from tdmtui.core.fhir import check_case, import_export


def run(obj, **kw):  # noqa: ANN001, ANN201
    kw.setdefault("protocol", site_protocol())
    return import_export(data(obj), "export.json", **kw)


def not_used(imported) -> dict[str, str]:  # noqa: ANN001
    return {ln.resource: ln.text for ln in imported.report.of("not used")}


def test_a_whole_export_becomes_the_case_it_describes():
    imp = run(bundle())
    raw = imp.raw
    assert imp.complete
    assert raw["drug"] == "vancomycin"
    assert raw["as_of"] == "2026-03-02T09:00+00:00"  # the Bundle's timestamp
    p = raw["patient"]
    assert (p["age"], p["sex"], p["weight"], p["height"]) == ("65 yr", "female", "68 kg", "165 cm")
    assert p["scr"] == [{"time": "2026-03-01T06:00+00:00", "value": "0.9 mg/dL"},
                        {"time": "2026-03-02T06:00+00:00", "value": "1.0 mg/dL"}]
    assert raw["doses"][0] == {"start": "2026-03-01T09:00+00:00", "amount": "1000 mg", "end": "2026-03-01T10:00+00:00"}
    assert [lv["conc"] for lv in raw["levels"]] == ["21.5 mg/L", "9.8 mg/L"]
    check_case(imp)  # parses as compute will


def test_the_name_and_identifier_never_reach_the_case():
    text = str(run(bundle()).raw)
    assert "Testperson" not in text and "INVENTED-0001" not in text


def test_age_is_completed_years_at_the_as_of_day():
    # born 1960-05-20: 65 on 2026-05-19, 66 on 2026-05-20 (completed years, common practice)
    assert run(bundle(), as_of="2026-05-19T23:59:00+00:00").raw["patient"]["age"] == "65 yr"
    assert run(bundle(), as_of="2026-05-20T00:00:00+00:00").raw["patient"]["age"] == "66 yr"


def test_below_and_above_the_assay_limits():
    items = resources()
    items[7] = obs("lv-1", "20578-1", "2026-03-02T00:00:00+00:00", 80, "mg/L", comparator=">")
    items[8] = obs("lv-2", "4092-3", "2026-03-02T08:30:00+00:00", 2.0, "mg/L", comparator="<")
    levels = run(bundle(items)).raw["levels"]
    assert levels[0] == {"time": "2026-03-02T00:00+00:00", "conc": "80 mg/L", "above_uloq": True}
    assert levels[1] == {"time": "2026-03-02T08:30+00:00", "conc": "2.0 mg/L", "below_loq": True}


@pytest.mark.parametrize("status", ["not-done", "stopped", "entered-in-error", "in-progress"])
def test_only_completed_administrations_count(status):
    items = resources()
    items[6] = dose("d-2", "2026-03-01T21:00:00+00:00", "2026-03-01T22:00:00+00:00", status=status)
    imp = run(bundle(items))
    assert len(imp.raw["doses"]) == 1
    assert f"status '{status}'" in not_used(imp)["MedicationAdministration/d-2"]


@pytest.mark.parametrize("status", ["entered-in-error", "preliminary", "cancelled"])
def test_only_final_results_count(status):
    items = resources()
    items[8] = obs("lv-2", "4092-3", "2026-03-02T08:30:00+00:00", 9.8, "mg/L", status=status)
    imp = run(bundle(items))
    assert len(imp.raw["levels"]) == 1
    assert status in not_used(imp)["Observation/lv-2"]


def test_a_rate_gives_the_infusion_time():
    items = resources()
    items[5] = dose("d-1", "2026-03-01T09:00:00+00:00", amount=1250, rate=qty(750, "mg/h"))
    row = run(bundle(items)).raw["doses"][0]
    assert row == {"start": "2026-03-01T09:00+00:00", "amount": "1250 mg", "duration": "100 min"}  # 1250/750 h


def test_a_rate_that_does_not_divide_is_rounded_to_a_hundredth_of_a_minute_and_said():
    items = resources()
    items[5] = dose("d-1", "2026-03-01T09:00:00+00:00", amount=1000, rate=qty(700, "mg/h"))
    imp = run(bundle(items))
    assert imp.raw["doses"][0]["duration"] == "85.71 min"  # 1000/700 h = 85.714... min
    assert any("rounded" in ln.text for ln in imp.report.of("note"))


def test_a_volume_rate_is_not_turned_into_a_time():
    items = resources()
    items[5] = dose("d-1", "2026-03-01T09:00:00+00:00", rate=qty(250, "mL/h"))
    assert "volume rate" in not_used(run(bundle(items)))["MedicationAdministration/d-1"]


def test_a_time_without_end_or_rate_is_not_a_dose():
    items = resources()
    items[5] = dose("d-1", "2026-03-01T09:00:00+00:00")
    assert "infusion time is unknown" in not_used(run(bundle(items)))["MedicationAdministration/d-1"]


def test_units_outside_the_map_are_reported_never_converted():
    items = resources()
    # vancomycin in umol/L: the molar mass our reference gives is from memory, so no conversion
    items[8] = obs("lv-2", "4092-3", "2026-03-02T08:30:00+00:00", 6.8, "umol/L")
    items[1] = obs("wt-1", "29463-7", "2026-03-01T08:00:00+00:00", 10.7, "[stone_av]")
    imp = run(bundle(items))
    reasons = not_used(imp)
    assert "'umol/L'" in reasons["Observation/lv-2"]
    assert "'[stone_av]'" in reasons["Observation/wt-1"]
    assert ("patient.weight", "no usable weight Observation in the export") in imp.report.missing


def test_unresolved_references_are_reported():
    items = resources()
    items[8] = obs("lv-2", "4092-3", "2026-03-02T08:30:00+00:00", 9.8, "mg/L", subject="Patient/someone-else")
    ref = dose("d-2", "2026-03-01T21:00:00+00:00", "2026-03-01T22:00:00+00:00")
    del ref["medicationCodeableConcept"]
    ref["medicationReference"] = {"reference": "Medication/not-in-export"}
    items[6] = ref
    reasons = not_used(run(bundle(items)))
    assert "'Patient/someone-else' does not resolve" in reasons["Observation/lv-2"]
    assert "'Medication/not-in-export' does not resolve" in reasons["MedicationAdministration/d-2"]


def test_urn_uuid_references_resolve():
    b = bundle()
    b["entry"][0]["fullUrl"] = "urn:uuid:0c5d2a5e-1111-4222-8333-444455556666"
    for e in b["entry"][1:]:
        e["resource"]["subject"] = {"reference": "urn:uuid:0c5d2a5e-1111-4222-8333-444455556666"}
    assert run(b).complete


def test_from_memory_codes_wait_for_a_site_to_confirm_them():
    imp = import_export(data(bundle()), "export.json")  # no protocol
    assert [m[0] for m in imp.report.missing] == ["patient.weight", "patient.height", "patient.scr"]
    assert "not confirmed" in not_used(imp)["Observation/wt-1"]
    with pytest.raises(InputError) as err:
        check_case(imp)
    assert err.value.field == "patient.weight"


def test_a_local_code_maps_a_level_and_the_report_names_it(tmp_path):
    from tdmtui.core.library import load_protocol

    proto = tmp_path / "p.toml"
    proto.write_text(open_site_codes() + "\n" + SITE_EXTRA, encoding="utf-8")
    items = resources()
    items[8] = obs("lv-2", "VANC-T", "2026-03-02T08:30:00+00:00", 9.8, "mg/L", system="http://lab.example.org/x")
    imp = import_export(data(bundle(items)), "export.json", protocol=load_protocol(proto))
    used = {ln.resource: ln for ln in imp.report.of("used")}
    assert used["Observation/lv-2"].mapping == "local code http://lab.example.org/x|VANC-T, protocol"
    assert used["Observation/lv-1"].mapping == "LOINC 20578-1 (built-in, confirmed)"
    assert imp.report.protocol == "Sample site codes (EXAMPLE - invented site)"


SITE_EXTRA = '[local_codes."http://lab.example.org/x|VANC-T"]\nlevel = "vancomycin"\nsource = "test"\n'


def open_site_codes() -> str:
    from fhirdata import SITE_CODES

    return SITE_CODES.read_text(encoding="utf-8")


def test_the_latest_weight_at_the_as_of_time_is_used_and_the_others_are_said():
    items = resources() + [obs("wt-0", "29463-7", "2026-02-20T08:00:00+00:00", 71, "kg"),
                           obs("wt-9", "29463-7", "2026-03-05T08:00:00+00:00", 66, "kg")]
    imp = run(bundle(items))
    assert imp.raw["patient"]["weight"] == "68 kg"
    reasons = not_used(imp)
    assert "Observation/wt-1 is used" in reasons["Observation/wt-0"]
    assert "after the as-of time" in reasons["Observation/wt-9"]


def test_other_drugs_are_left_out_and_said():
    items = resources() + [dose("g-1", "2026-03-01T12:00:00+00:00", "2026-03-01T12:30:00+00:00", amount=400,
                                med="Gentamicin 400 mg")]
    with pytest.raises(InputError) as err:
        run(bundle(items))
    assert err.value.field == "--drug" and "gentamicin and vancomycin" in err.value.message
    imp = run(bundle(items), drug="vancomycin")
    assert "not of this case's vancomycin" in not_used(imp)["MedicationAdministration/g-1"]


def test_a_route_that_is_not_intravenous_is_not_a_dose():
    items = resources()
    items[5]["dosage"]["route"] = {"text": "Oral"}
    assert "not intravenous" in not_used(run(bundle(items)))["MedicationAdministration/d-1"]


def test_a_standing_order_gives_the_schedule():
    order = {"resourceType": "MedicationRequest", "id": "mr-1", "status": "active", "intent": "order",
             "medicationCodeableConcept": {"text": "Vancomycin"}, "subject": {"reference": PATIENT},
             "dosageInstruction": [{"timing": {"repeat": {"frequency": 2, "period": 1, "periodUnit": "d"}},
                                    "doseAndRate": [{"doseQuantity": qty(1000, "mg"), "rateQuantity": qty(1000, "mg/h")}]}]}
    raw = run(bundle(resources() + [order])).raw
    assert raw["schedule"] == {"interval": "12 h", "dose": "1000 mg", "duration": "60 min"}
    stopped = dict(order, id="mr-2", status="stopped")
    imp = run(bundle(resources() + [stopped]))
    assert "schedule" not in imp.raw and "status 'stopped'" in not_used(imp)["MedicationRequest/mr-2"]


def test_two_active_orders_give_no_schedule():
    order = {"resourceType": "MedicationRequest", "id": "mr-1", "status": "active", "intent": "order",
             "medicationCodeableConcept": {"text": "Vancomycin"}, "subject": {"reference": PATIENT},
             "dosageInstruction": [{"timing": {"repeat": {"period": 12, "periodUnit": "h"}}}]}
    imp = run(bundle(resources() + [order, dict(order, id="mr-2")]))
    assert "schedule" not in imp.raw
    assert "2 active orders" in not_used(imp)["MedicationRequest/mr-2"]


def test_a_resource_type_not_read_is_listed():
    imp = run(bundle(resources() + [{"resourceType": "Condition", "id": "c-1"}]))
    assert "not read" in not_used(imp)["Condition/c-1"]


def test_a_plain_array_and_a_searchset_read_like_a_collection():
    a = run(resources(), as_of="2026-03-02T09:00:00+00:00").raw
    b = run(bundle(kind="searchset")).raw
    a.pop("imported"), b.pop("imported")
    assert a == b


@pytest.mark.parametrize("blob, words", [
    (b"{not json", "is not JSON"),
    (b'{"format": "tdmtui.case/1"}', "not FHIR"),
    (b'{"resourceType": "Observation"}', "not an export"),
    (b'{"resourceType": "Bundle", "type": "transaction", "entry": []}', "transaction"),
    (b'{"resourceType": "Bundle", "type": "collection", "type": "searchset"}', "appears twice"),
])
def test_bad_input_is_a_clear_error(blob, words):
    with pytest.raises(InputError) as err:
        import_export(blob, "export.json")
    assert words in err.value.message


def test_two_patients_is_an_error():
    items = resources() + [{"resourceType": "Patient", "id": "pt-2", "gender": "male", "birthDate": "1950-01-01"}]
    with pytest.raises(InputError) as err:
        run(bundle(items))
    assert "2 Patient resources" in err.value.message and "one patient" in err.value.message


def test_a_case_error_names_the_resource_it_came_from():
    items = resources()
    items[1] = obs("wt-1", "29463-7", "2026-03-01T08:00:00+00:00", 9000, "kg")
    with pytest.raises(InputError) as err:
        check_case(run(bundle(items)))
    assert err.value.field == "patient.weight" and "Observation/wt-1" in err.value.message


def test_control_characters_in_ids_never_reach_the_report():
    items = resources()
    items[8]["id"] = "lv\x1b[31m-2"
    items[8]["status"] = "cancelled"
    text = run(bundle(items)).report.text()
    assert "\x1b" not in text


def test_unconfirmed_peak_codes_are_not_built_in():
    from tdmtui.core.fhir.codes import LEVEL_CODES

    # the reference marks no gentamicin or amikacin peak code as confirmed; every built-in code is [confirmed]
    assert set(LEVEL_CODES) == {"4092-3", "4090-7", "20578-1", "3665-7", "35668-3", "4059-2", "4057-6",
                                "35670-9", "3321-7", "35669-1"}
    assert LOINC == "http://loinc.org"
