"""The caution every report and the window show beside the figures, and the one
explanation every report gives: what the normal shortcut is."""

CAUTION = (
    "Results depend on the inputs given. They support, not replace, the organisation's "
    "estimating policy and professional judgement."
)

# Said once in every report, where the term first matters.
NORMAL_SHORTCUT_GLOSS = (
    "The normal shortcut is the usual quick method: add the items' means and variances and "
    "read the total off a normal curve. Rangefold computes the total itself and shows where "
    "the shortcut is close enough and where it is not."
)
