"""The light scenario checks (fringe.io.scenario_keys) and the loader share one key list."""

from __future__ import annotations

import fringe.io.scenario as scenario
from fringe.io import (
    scenario_drawing,
    scenario_implants,
    scenario_moving,
    scenario_quench,
    scenario_steel,
)
from fringe.io.scenario_keys import TOP_LEVEL_KEYS


def test_loader_uses_the_light_key_list():
    assert scenario.TOP_LEVEL_KEYS is TOP_LEVEL_KEYS


def test_every_section_parser_key_is_a_top_level_key():
    """Each section module's SECTION_KEY is listed, in the order its section is parsed."""
    keys = [m.SECTION_KEY for m in (scenario_quench, scenario_implants, scenario_steel,
                                    scenario_moving, scenario_drawing)]
    assert [k for k in TOP_LEVEL_KEYS if k in keys] == keys
