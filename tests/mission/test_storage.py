"""The onboard store over time (tradeopt.mission.storage) against a plain step-by-step ledger."""
import numpy as np
import pytest

from tradeopt.mission.storage import store_timeline


def _ledger(idx, rate, n, step_s, g, capacity, period):
    """The definition, one step at a time: add the step's data (excess over the capacity is lost), then send."""
    level, lost, ends, sent, highest = 0.0, np.zeros(-(-n // period)), np.zeros(-(-n // period)), {}, 0.0
    drain = dict(zip(idx.tolist(), rate.tolist()))
    for t in range(n):
        level += g * step_s
        if level > capacity:
            lost[t // period] += level - capacity
            level = capacity
        highest = max(highest, level)
        if t in drain:
            sent[t] = min(level, drain[t] * step_s)
            level -= sent[t]
        if (t + 1) % period == 0 or t == n - 1:
            ends[t // period] = level
    return np.array([sent[i] for i in idx.tolist()]), lost, ends, level, highest


def test_matches_the_step_by_step_ledger_on_random_spans():
    # Catches: a wrong closed form for a run of contact steps (Lindley's reflected walk), a loss or fill
    # recorded in the wrong period when a run crosses a period boundary, a full store inside a contact.
    rng = np.random.default_rng(7)
    for _ in range(300):
        n = int(rng.integers(1, 300))
        period = int(rng.integers(1, 50))
        idx = np.sort(rng.choice(n, size=int(rng.integers(0, n + 1)), replace=False))
        rate = rng.uniform(0, 5, idx.size) * (rng.random(idx.size) > 0.2)
        capacity, g, step = float(rng.uniform(0, 60)), float(rng.uniform(0, 3)), float(rng.choice([1.0, 2.5]))
        t = store_timeline(step_index=idx, drain_rate_bps=rate, n_steps=n, step_s=step, generation_rate_bps=g,
                           capacity_bits=capacity, period_steps=period)
        sent, lost, ends, level, highest = _ledger(idx, rate, n, step, g, capacity, period)
        np.testing.assert_allclose(t.delivered_bits, sent, atol=1e-9)
        np.testing.assert_allclose(t.lost_bits_per_period, lost, atol=1e-9)
        np.testing.assert_allclose(t.level_end_bits, ends, atol=1e-9)
        assert t.stored_end_bits == pytest.approx(level, abs=1e-9)
        assert t.max_fill_bits == pytest.approx(highest, abs=1e-9)
        # conservation: every bit generated is delivered, lost or still on board
        assert t.generated_bits == pytest.approx(t.delivered_total_bits + t.lost_total_bits + t.stored_end_bits)


def test_hand_worked_day_with_a_full_store():
    # Catches: data beyond the capacity silently dropped instead of counted as lost.
    # 10 steps of 1 s, 2 bit/s generated, capacity 5 bit, one contact at step 9 sending up to 10 bit/s:
    # the store is full (5) from step 2 on; steps 0-8 generate 18 bit, 13 lost; step 9 adds 2 (1 lost)
    # and sends the 5 held.
    t = store_timeline(step_index=[9], drain_rate_bps=[10.0], n_steps=10, step_s=1.0, generation_rate_bps=2.0,
                       capacity_bits=5.0, period_steps=10)
    assert t.delivered_bits.tolist() == [5.0]
    assert t.lost_total_bits == 15.0 and t.stored_end_bits == 0.0 and t.generated_bits == 20.0


def test_unlimited_store_loses_nothing():
    # Catches: losses counted without a capacity.
    t = store_timeline(step_index=[], drain_rate_bps=[], n_steps=1000, step_s=1.0, generation_rate_bps=3.0,
                       capacity_bits=np.inf, period_steps=100)
    assert t.lost_total_bits == 0.0 and t.stored_end_bits == 3000.0
    assert t.level_end_bits.tolist() == [300.0 * (k + 1) for k in range(10)]


def test_rejects_unsorted_steps():
    with pytest.raises(ValueError, match="strictly increasing"):
        store_timeline(step_index=[3, 2], drain_rate_bps=[1.0, 1.0], n_steps=5, step_s=1.0, generation_rate_bps=1.0,
                       capacity_bits=1.0, period_steps=5)
