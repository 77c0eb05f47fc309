"""What a reading can show: comparisons that allow for the instrument's resolution and reading error."""
import bisect

SG_INSTRUMENT_RESOLUTION = 0.005  # float hydrometer: graduated every 0.005, good to about ±0.005


def beyond_resolution(difference, limit, resolution, readings_compared=1):
    """True when `difference` is over `limit` by more than the instrument's error could add.

    `readings_compared` is how many single readings, each good to ±`resolution`, can push the difference
    up: 1 for a cell against the mean of many others (the mean's own error averages out), 2 for the gap
    between two cells or a spread (highest minus lowest). An equalizing charge that "stopped rising"
    uses 1: a rise no bigger than the resolution is no rise.
    Source: common practice (field notes, "Measuring well"): a difference smaller than the instrument
    can show is not evidence.
    """
    if resolution < 0:
        raise ValueError("The resolution cannot be negative.")
    if readings_compared < 0:
        raise ValueError("The number of readings compared cannot be negative.")
    return float(difference) > float(limit) + readings_compared * float(resolution) + 1e-9


def below_median_of_others_sg(sg_by_position):
    """How far each cell reads below the median of the other cells: {position: SG difference}.

    Judging each cell against the typical cell, rather than the highest against the lowest, keeps the
    comparison the same on a 6-cell block and a 40-cell tray: the range between the two extremes of n healthy
    cells grows with n (about 2.5 standard deviations for 6 cells, 4.3 for 40: expected range of a normal
    sample, standard statistical tables), while a cell's distance from the median of the others does not;
    the median also ignores one odd cell, where a mean is pulled by it.
    Source: common practice (field notes, "Measuring well": cells of a healthy tray differ by a few points);
    the expected-range figures are textbook order statistics.
    """
    values = [(position, float(sg)) for position, sg in dict(sg_by_position).items() if sg is not None]
    if len(values) < 2:
        return {}
    ordered = sorted(sg for _, sg in values)
    count = len(ordered) - 1  # the others

    def other(index, skipped):  # the index-th of the others, with ordered[skipped] left out
        return ordered[index if index < skipped else index + 1]

    below = {}
    for position, sg in values:
        skipped = bisect.bisect_left(ordered, sg)
        middle = count // 2
        median = other(middle, skipped) if count % 2 else (other(middle - 1, skipped) + other(middle, skipped)) / 2
        below[position] = round(median - sg, 6)
    return below


def furthest_below_median_of_others_sg(sg_by_position):
    """The furthest any cell reads below the median of the other cells (SG), or None for fewer than two cells:
    the one figure that says how far behind a battery's weakest cell is, as the spread rule judges it.
    Source: common practice (field notes, "Measuring well"), as `below_median_of_others_sg`."""
    ordered = sorted(float(sg) for sg in dict(sg_by_position).values() if sg is not None)
    if len(ordered) < 2:
        return None
    # The lowest cell is the furthest behind: leaving it out raises the others' median the most, and its own SG is
    # the least. So one median answers, where below_median_of_others_sg works out one for every cell.
    others = ordered[1:]
    middle = len(others) // 2
    median = others[middle] if len(others) % 2 else (others[middle - 1] + others[middle]) / 2
    furthest = round(median - ordered[0], 6)
    if furthest == 0:  # a level tray: the answer is the first cell's zero, which may be -0.0 after rounding
        return max(below_median_of_others_sg(sg_by_position).values())
    return furthest
