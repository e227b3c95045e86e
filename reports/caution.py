"""The caution every report and the window show beside the figures."""

CAUTION = (
    "Results depend on the inputs given. They support, not replace, the organisation's "
    "estimating policy and professional judgement."
)
