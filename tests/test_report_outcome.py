"""The report's sentence on why the limiting joint of a payload or stance case stops.

Reference: the transmission law of DEVELOPERS.md (motoring τ_j = η_f·N·τ_m, back-driven
τ_j = N·τ_m/η_b, both capped by the gear's peak rating): a joint held against its load stops at
its holding torque, or at the gear rating when that is lower [pub, gear efficiency]."""

from __future__ import annotations

from jointwright.report.outcome import _limiting_reason


def _assessment(hold: float, gear: float) -> dict:
    joint = {
        "joint": "knee",
        "capacity_motoring": 20.0,
        "capacity_backdriven": hold,
        "gear_peak_torque": gear,
    }
    return {"joints": [joint]}


def _stance(torque: float) -> dict:
    return {"limiting_joint": "knee", "joint_modes": None, "metrics": {"joint_torque:knee": torque}}


def test_a_stance_joint_held_at_its_holding_torque():
    text = _limiting_reason(_assessment(hold=25.0, gear=40.0), _stance(-25.0))
    assert "holding torque (25 N·m" in text


def test_a_stance_joint_held_at_its_gear_rating():
    text = _limiting_reason(_assessment(hold=28.0, gear=28.0), _stance(-28.0))
    assert "gear torque limit" in text and "larger motor or ratio does not" in text


def test_a_stance_joint_driving_at_its_drive_torque():
    text = _limiting_reason(_assessment(hold=25.0, gear=40.0), _stance(20.0))
    assert "drive torque (20 N·m)" in text


def test_the_outcome_leads_with_the_payload_every_case_carries():
    """The sizing's payload objective is the least payload mass over the payload cases: the
    outcome states it first (12.88 kg in reach-lift), even when another case is tightest
    against its own requirement (close-lift, 13.2 kg carried against a 5 kg requirement)."""
    from jointwright.project import load_example
    from jointwright.report.outcome import _payload_words

    arm = load_example("arm")

    def case(name: str, force: float, carried: float) -> dict:
        metrics = {"payload": force, "payload_carried": carried}
        return {"name": name, "kind": "payload", "metrics": metrics, "limiting_joint": None}

    a = {
        "cases": [case("reach-lift", 130.3, 12.88), case("close-lift", 133.4, 13.2)],
        "checks": [
            {"subject": "reach-lift", "requirement": "payload_min", "margin": 2.91},
            {"subject": "close-lift", "requirement": "payload_min", "margin": 1.52},
        ],
        "joints": [],
    }
    head, detail = _payload_words(a, arm)
    assert head == (
        "The design carries a payload of at least 12.88 kg in every payload case (the least, "
        "in case reach-lift)."
    )
    assert detail.startswith("Payload is tightest against its requirement in case close-lift")
