"""Words the findings use that other screens repeat (the budget's forecast quotes them).

Plain strings, no Django: written once here so a forecast and a finding say the same thing.
"""

WEAK_CELL = "Weak cell"
SULFATION = "Suspected sulfation"
FAILING_AFTER_EQUALIZING = "failing: still low after equalizing"
LOW_ON_CONSECUTIVE = "low on consecutive post-charge readings"
EQUALIZE_AND_TEST = (
    "Give a full charge followed by an equalizing charge, then read all cells again. If the mean SG still falls "
    "short, book a capacity test."
)
