"""What a reading can show: comparisons that allow for the instrument's resolution and reading error."""

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
