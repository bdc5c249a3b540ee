"""The notebook-facing API: every exported name resolves, and a run works tables in, tables out."""

from __future__ import annotations

import pytest

import geomet


def test_every_exported_name_resolves():
    for name in geomet.__all__:
        assert getattr(geomet, name) is not None


def test_unknown_name_is_an_attribute_error():
    with pytest.raises(AttributeError, match="no attribute 'not_a_thing'"):
        geomet.not_a_thing  # noqa: B018


def test_bond_law_through_the_public_api():
    # Bond (1952) third law, W = 10 Wi (1/sqrt(P80) - 1/sqrt(F80)): Wi 14 kWh/t, F80 10 000 um,
    # P80 100 um -> 10 * 14 * (0.1 - 0.01) = 12.6 kWh/t (hand arithmetic).
    assert geomet.bond_specific_energy(14.0, 10_000.0, 100.0) == pytest.approx(12.6, rel=1e-12)
