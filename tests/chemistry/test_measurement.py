"""Comparisons that allow for the instrument (field notes, "Measuring well": float hydrometers are graduated every
0.005 and good to about ±0.005, common practice)."""
import pytest

from fleetcare import chemistry
from fleetcare.chemistry import below_median_of_others_sg, beyond_resolution


def test_a_difference_counts_only_beyond_the_limit_plus_the_readings_errors():
    assert not beyond_resolution(0.025, 0.020, 0.005)
    assert beyond_resolution(0.026, 0.020, 0.005)
    assert not beyond_resolution(0.030, 0.020, 0.005, readings_compared=2)
    assert beyond_resolution(0.021, 0.020, 0.005, readings_compared=0)


def test_it_refuses_a_negative_resolution():
    with pytest.raises(ValueError):
        beyond_resolution(0.03, 0.02, -0.001)


def test_each_cell_is_measured_from_the_median_of_the_other_cells():
    below = below_median_of_others_sg({1: 1.285, 2: 1.285, 3: 1.260, 4: 1.290})
    # cell 3: others 1.285, 1.285, 1.290 -> median 1.285; cell 4: others 1.260, 1.285, 1.285 -> 1.285
    assert below == {1: pytest.approx(0.0), 2: pytest.approx(0.0), 3: pytest.approx(0.025), 4: pytest.approx(-0.005)}


def test_an_even_number_of_others_takes_the_middle_pair():
    below = below_median_of_others_sg({1: 1.280, 2: 1.290, 3: 1.270})
    assert below[3] == pytest.approx(0.015)  # others 1.280 and 1.290: median 1.285


def test_one_odd_cell_does_not_move_the_others_median():
    # with a mean, cell 9 at 1.200 would pull every other cell's reference down by 0.004 on 24 cells
    cells = {p: 1.285 for p in range(1, 25)}
    cells[9] = 1.200
    below = below_median_of_others_sg(cells)
    assert below[9] == pytest.approx(0.085) and below[1] == pytest.approx(0.0)


def test_blank_cells_are_left_out_and_one_cell_has_no_others():
    assert below_median_of_others_sg({1: 1.28, 2: None}) == {}
    assert below_median_of_others_sg({1: 1.28, 2: None, 3: 1.27}) == {1: pytest.approx(-0.01), 3: pytest.approx(0.01)}


def test_the_furthest_behind_is_the_lowest_cells_distance_from_the_middle_of_the_others():
    # Worked by hand: others of cell 3 are 1.280, 1.285, 1.290, 1.270 -> median (1.280 + 1.285) / 2 = 1.2825.
    sgs = {1: 1.280, 2: 1.285, 3: 1.250, 4: 1.290, 5: 1.270}
    assert chemistry.furthest_below_median_of_others_sg(sgs) == pytest.approx(0.0325)
    assert chemistry.furthest_below_median_of_others_sg({1: 1.280, 2: 1.280}) == 0
    assert chemistry.furthest_below_median_of_others_sg({1: 1.280}) is None


def test_the_furthest_behind_is_exactly_the_largest_of_every_cells_measure():
    """The furthest-behind figure is worked from the lowest cell alone; on 20,000 random trays (1 to 40 cells, SGs to
    0.001 or read to 0.0005 as a median of two ends, blanks and level trays among them) it is the very float the
    per-cell rule's largest measure is, sign of zero included, so stored summaries stay byte for byte the same."""
    import random
    from decimal import Decimal

    rng = random.Random(20261203)
    for _ in range(20_000):
        size = rng.randint(1, 40)
        base = rng.randint(1100, 1300)
        spread = rng.choice([0, 1, 3, 10, 40, 150])
        step = rng.choice([Decimal("0.001"), Decimal("0.0005")])
        tray = {p: base * Decimal("0.001") + rng.randint(-spread, spread) * step for p in range(1, size + 1)}
        if rng.random() < 0.2:
            tray[rng.randint(1, size)] = None
        sgs = {p: None if v is None else float(v) for p, v in tray.items()}
        below = below_median_of_others_sg(sgs)
        expected = max(below.values()) if below else None
        found = chemistry.furthest_below_median_of_others_sg(sgs)
        assert repr(found) == repr(expected), sgs
