"""Probability of target and 90 % intervals over posterior draws.

Reference: each draw's steady-state figures from the textbook equations written out
here (pk-sources.md 2.3: Cmax,ss = k0 (1 - e^(-ke t')) / [ke V (1 - e^(-ke tau))],
Cmin,ss = Cmax,ss e^(-ke (tau - t')), AUC24 = daily dose / CL), then the share in band
and numpy percentiles.
"""

from __future__ import annotations

import numpy as np
import pytest

from tdmtui.core.models import DoseArrays, PKParams
from tdmtui.core.regimen import CurrentRegimen, design

from regimen_cases import T0, inp


def textbook(cl: np.ndarray, v: np.ndarray, dose: float, tau: float, tinf: float) -> tuple[np.ndarray, ...]:
    ke = cl / v
    cmax = dose / tinf * -np.expm1(-ke * tinf) / (ke * v * -np.expm1(-ke * tau))
    return cmax, cmax * np.exp(-ke * (tau - tinf)), 24.0 * dose / (tau * cl)


class Batch:
    """Batched draws in the Bayesian module's shape, figures by the textbook equations."""

    def __init__(self, cl: np.ndarray, v: np.ndarray) -> None:
        self.cl, self.v1 = cl, v
        self.q = self.v2 = np.zeros_like(cl)
        self.weights = None

    def __len__(self) -> int:
        return self.cl.size

    def steady_state(self, dose: float, tau: float, tinf: float, peak_delay_h: float = 0.0) -> dict:
        pk, tr, au = textbook(self.cl, self.v1, dose, tau, tinf)
        return {"peak": pk * np.exp(-self.cl / self.v1 * peak_delay_h), "trough": tr, "auc24": au}


rng = np.random.default_rng(20260301)
CL = 4.27 * np.exp(rng.normal(0.0, 0.25, 400))   # around the W5 patient (pk-sources.md 5)
V = 51.6 * np.exp(rng.normal(0.0, 0.15, 400))


def _case(samples):  # noqa: ANN001, ANN202
    hist = DoseArrays.regimen(T0, 1500.0, 12.0, 1.5, 6)
    return inp("vancomycin", PKParams.one_compartment(0.0827, 51.6), hist, as_of=float(hist.start[-1]) + 11.0,
               current=CurrentRegimen(1500.0, 12.0, 1.5), samples=samples, method="bayesian")


@pytest.mark.parametrize("kind", ["list", "batch"])
def test_probability_and_interval_match_the_textbook(kind: str) -> None:
    samples = [PKParams(float(c), float(v)) for c, v in zip(CL, V)] if kind == "list" else Batch(CL, V)
    plan = design(_case(samples))
    reg = plan.regimen
    pk, tr, au = textbook(CL, V, reg["dose_mg"], reg["interval_h"], reg["infusion_h"])
    expected = float(np.mean((au >= 400.0) & (au <= 600.0)))  # 2020 guideline band, library default
    assert reg["predicted"]["target_probability"] == pytest.approx(expected, abs=1e-12)
    lo, hi = reg["predicted"]["interval90"]["auc24_mg_h_per_l"]
    assert (lo, hi) == pytest.approx(tuple(np.percentile(au, [5.0, 95.0])), rel=1e-9)
    lo, hi = reg["predicted"]["interval90"]["trough_mg_per_l"]
    assert (lo, hi) == pytest.approx(tuple(np.percentile(tr, [5.0, 95.0])), rel=1e-9)
    for alt in reg["alternatives"]:
        _, _, a = textbook(CL, V, alt["dose_mg"], alt["interval_h"], alt["infusion_h"])
        assert alt["predicted"]["target_probability"] == pytest.approx(np.mean((a >= 400) & (a <= 600)), abs=1e-12)


def test_candidate_table_probabilities_from_batched_draws() -> None:
    plan = design(_case(Batch(CL, V)))
    for row in plan.candidates[::7]:
        _, _, a = textbook(CL, V, row["dose_mg"], row["interval_h"], row["infusion_h"])
        assert row["probability"] == pytest.approx(np.mean((a >= 400) & (a <= 600)), abs=1e-12)
