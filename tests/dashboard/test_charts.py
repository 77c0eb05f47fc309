from fleetcare import charts


def test_tukey_fences_use_the_quartiles_and_one_and_a_half_interquartile_ranges():
    # Quartiles of 1..8 by the inclusive method: 2.75, 4.5, 6.25 (Python statistics.quantiles docs' method);
    # fences at 1.5 IQR beyond them (Tukey's rule, common statistical convention).
    assert charts.tukey_fences([1, 2, 3, 4, 5, 6, 7, 8]) == (2.75, 4.5, 6.25, -2.5, 11.5)


def test_the_box_whiskers_reach_the_lowest_and_highest_values_so_nothing_is_hidden():
    fig = charts.box_with_outliers([("48 V", [("Jan", [10, 11, 12, 13, 40])], [("Jan", 40, "B-7")])], "t", "mL")
    box = fig.data[0]
    assert box.upperfence == (40,) and box.lowerfence == (10,)
    assert (box.q1, box.median, box.q3) == ((11,), (12,), (13,))
    assert fig.data[1].text == ("B-7",)
