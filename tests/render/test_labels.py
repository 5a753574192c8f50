"""The label-placement geometry (fringe.render.labels) on its own: boxes, segments,
obstacles, candidates and the greedy choice. Rules of this project's drawings (common
practice, no source); the expected numbers follow from the geometry by hand."""

from __future__ import annotations

import numpy as np
import pytest

from fringe.render import labels as lp


def test_box_overlap_needs_area_not_a_shared_edge():
    b = (0.0, 0.0, 2.0, 1.0)
    others = [(1.0, 0.5, 3.0, 2.0), (2.0, 0.0, 3.0, 1.0), (0.0, 1.0, 2.0, 2.0)]
    assert lp.boxes_overlap(b, others).tolist() == [True, False, False]
    # with a pad, the boxes that only touch now overlap
    assert lp.boxes_overlap(b, others, pad=0.1).tolist() == [True, True, True]
    assert lp.boxes_overlap_any([b, (10, 10, 11, 11)], others).tolist() == [True, False]


def test_clearance_is_the_gap_to_the_nearest_box():
    assert lp.clearance((0, 0, 1, 1), [(4, 0, 5, 1)]) == pytest.approx(3.0)
    assert lp.clearance((0, 0, 1, 1), [(4, 5, 5, 6)]) == pytest.approx(5.0)  # 3-4-5
    assert lp.clearance((0, 0, 1, 1), []) == np.inf
    assert lp.clearances([(0, 0, 1, 1), (0, 0, 4.5, 1)], [(4, 0, 5, 1)]).tolist() == [3, 0]


def test_segments_through_a_box_but_not_along_or_beside_it():
    b = (0.0, 0.0, 2.0, 1.0)
    through = (-1.0, 0.5, 3.0, 0.5)
    diagonal = (-1.0, -1.0, 3.0, 3.0)
    along_edge = (0.0, 1.0, 2.0, 1.0)
    beside = (2.5, -1.0, 2.5, 3.0)
    ending_inside = (1.0, 0.5, 1.0, 5.0)
    corner_only = (1.0, 2.0, 3.0, 0.0)  # touches the corner (2, 1) only
    assert lp.segments_hit_box(b, [through])
    assert lp.segments_hit_box(b, [diagonal])
    assert lp.segments_hit_box(b, [ending_inside])
    assert not lp.segments_hit_box(b, [along_edge, beside, corner_only])
    assert lp.segments_hit_boxes([b, (5, 5, 6, 6)], [through]).tolist() == [True, False]


def test_length_inside_a_box():
    b = (0.0, 0.0, 2.0, 1.0)
    # 2 of the horizontal line, 1 of the vertical one
    assert lp.length_in_box(b, [(-1, 0.5, 3, 0.5), (1, -5, 1, 5)]) == pytest.approx(3.0)
    # the diagonal y = x/2 crosses the whole box: length sqrt(2² + 1²)
    assert lp.length_in_box(b, [(-2, -1, 4, 2)]) == pytest.approx(np.sqrt(5.0))
    assert lp.length_in_box(b, [(5, 5, 6, 6)]) == 0.0


def test_segments_from_polylines_skip_gaps():
    segs = lp.segments_from_lines([[(0, 0), (1, 0), (np.nan, np.nan), (2, 0), (3, 0)],
                                   [(5, 5)]])
    assert segs.tolist() == [[0, 0, 1, 0], [2, 0, 3, 0]]


def test_around_gives_eight_positions_per_ring_at_the_gap():
    anchor = (10.0, 10.0, 12.0, 12.0)
    cands = lp.around(anchor, 4.0, 2.0, gaps=(1.0, 5.0))
    assert len(cands) == 16
    for k, (dx, dy) in enumerate(lp.AROUND_DIRECTIONS):
        x0, y0, x1, y1 = cands[k]
        assert (x1 - x0, y1 - y0) == (4.0, 2.0)
        if dx > 0:
            assert x0 == 13.0
        elif dx < 0:
            assert x1 == 9.0
        else:
            assert (x0 + x1) / 2 == 11.0
        if dy > 0:
            assert y0 == 13.0
        elif dy < 0:
            assert y1 == 9.0
    assert cands[8][0] == 17.0  # second ring, right of the anchor by 5


def test_obstacles_free_respects_frame_boxes_and_walls():
    obs = lp.Obstacles(frame=(0, 0, 100, 100), boxes=[(40, 40, 60, 60)],
                       walls=[(0, 20, 100, 20)], pad=1.0)
    assert obs.free((5, 25, 15, 35))
    assert not obs.free((95, 25, 105, 35))          # leaves the frame
    assert not obs.free((50, 50, 70, 70))           # on a placed label
    assert not obs.free((5, 15, 15, 25))            # across the wall
    assert not obs.free((5, 20.5, 15, 30))          # within the pad of the wall
    assert obs.free((5, 21.5, 15, 30))              # just beyond it
    assert obs.free((5, 15, 15, 25), walls=False)
    assert not obs.free((5, 25, 15, 35), more_walls=[(10, 0, 10, 100)])
    obs.add_box((5, 25, 15, 35))
    assert not obs.free((5, 25, 15, 35))


def test_soft_cost_counts_line_under_a_label_less_its_own():
    obs = lp.Obstacles(frame=(0, 0, 100, 100), soft=[(0, 50, 100, 50), (30, 0, 30, 100)],
                       pad=0.0)
    b = (20, 45, 40, 55)
    assert obs.soft_cost(b) == pytest.approx(20 + 10)
    own = np.array([(0, 50, 100, 50)])
    assert obs.soft_costs([b], minus=own)[0] == pytest.approx(10)


def test_choose_takes_the_cheapest_free_candidate_and_is_deterministic():
    obs = lp.Obstacles(frame=(0, 0, 100, 100), boxes=[(0, 0, 10, 10)],
                       soft=[(0, 30, 100, 30)], pad=0.0)
    cands = [(5, 5, 15, 15),      # on the placed box: not free
             (20, 25, 30, 35),    # free, 10 of soft line under it
             (40, 40, 50, 50),    # free, clear
             (60, 60, 70, 70)]    # free, clear, later
    assert lp.choose(cands, obs) == 2
    assert lp.choose(cands, obs, extra_cost=[0, 0, 5, 1]) == 3
    assert lp.choose(cands, obs, soft_weight=0.0, extra_cost=[0, 0, 0, 0]) == 1
    assert lp.choose([(5, 5, 15, 15)], obs) is None
    assert lp.choose([], obs) is None


def test_greedy_placement_of_many_labels_never_overlaps():
    # 40 labels round markers on a grid with walls between: every placed box is free
    rng = np.random.default_rng(3)
    obs = lp.Obstacles(frame=(0, 0, 400, 300),
                       walls=[(0, 150, 400, 150), (200, 0, 200, 300)], pad=1.0)
    anchors = [(float(x), float(y)) for x, y in rng.uniform(20, 280, size=(40, 2))]
    for x, y in anchors:
        obs.add_box(lp.box_around(x, y, 6, 6))
    placed = []
    for x, y in anchors:
        cands = lp.around(lp.box_around(x, y, 6, 6), 30, 8, gaps=(2, 6, 12, 20, 32, 48))
        k = lp.choose(cands, obs)
        if k is not None:
            obs.add_box(cands[k])
            placed.append(cands[k])
    assert len(placed) >= 30
    for i, a in enumerate(placed):
        assert not lp.boxes_overlap(a, placed[i + 1:]).any()
        assert not lp.segments_hit_box(a, obs.walls)
