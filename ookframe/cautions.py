"""The regulatory caution shown wherever airtime, power or duty cycle is reported."""

REGULATORY_CAUTION = (
    "Airtime, power and duty-cycle figures are estimates. Radio rules differ by region and "
    "change over time: check your local regulations and certification requirements before "
    "transmitting."
)
