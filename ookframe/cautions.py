"""The regulatory caution shown wherever airtime, power or duty cycle is reported."""

REGULATORY_CAUTION = (
    "Airtime, power and duty-cycle figures are estimates. Radio rules differ by region and "
    "change over time: check your local regulations and certification requirements before "
    "transmitting."
)

#: shown with range, received-power and link-margin figures of the physical link model
RANGE_CAUTION = (
    "Range and link figures are estimates from a model (path loss, receiver and antennas "
    "as stated; real links fade and meet interference, bodies and the ground). "
    + REGULATORY_CAUTION
)
