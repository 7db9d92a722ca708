"""The demo's generated series: the page's model fits k and E_a back; loading twice adds nothing."""

from __future__ import annotations

import pytest

from hazards import models as m
from hazards.demo import load_demo
from hazards.whatif import demo, services

pytestmark = pytest.mark.django_db


def test_the_demo_step_fits_its_generating_model_and_reloads_idempotently():
    load_demo()
    step = m.ReactionStep.objects.get(name=demo.STEP_NAME)
    assert m.CalorimetrySeries.objects.filter(run__step=step).count() == 2
    case, rows = services.load(step.pk)
    model = services.build_model(case, rows)
    # generated: k·t_d = 8.33 over a 150-min lab feed at 70 °C, E_a 65 kJ/mol, 0.3 % noise
    assert model.rate_constant_per_s == pytest.approx(demo.K_70, rel=0.03)
    assert model.activation_energy_j_per_mol == pytest.approx(demo.EA, rel=0.1)
    assert model.activation_energy_source == "fitted from 2 runs"
    point = services.evaluate(case, model, dosing_time_s=step.dosing_time_s)
    assert point.criticality_class is not None and point.cooling_margin is not None
    counts = (m.CalorimetryRun.objects.count(), m.CalorimetrySeries.objects.count(),
              m.IndicatorSnapshot.objects.count())
    load_demo()
    assert (m.CalorimetryRun.objects.count(), m.CalorimetrySeries.objects.count(),
            m.IndicatorSnapshot.objects.count()) == counts
