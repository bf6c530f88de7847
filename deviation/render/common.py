"""Words and figures shared by every renderer."""

CAUTIONS = (
    "A plan is not a compass swing: these figures come from the routes, currents and sizes in "
    "the plan, and cables laid differently give different fields.",
    "After installation have the compass adjusted and swung by a qualified compass adjuster, and "
    "calibrate electronic compasses and magnetometers as their makers direct, in the final "
    "installation.",
    "Electrical work per ISO 10133 (small craft, extra-low-voltage DC) or ABYC E-11, and local "
    "codes, by licensed or competent people.",
)


def degrees(value, overwhelmed=False):
    """A deviation for display; 'overwhelmed' where the sensor can point anywhere."""
    if overwhelmed or value >= 180.0:
        return "overwhelmed"
    return f"{value:.2f}"


def microtesla(value_t):
    return f"{value_t * 1e6:.3f}"


def verdict(state_result, budget_deg):
    if state_result.overwhelmed:
        return "OVERWHELMED"
    return "within" if state_result.within_budget else "OVER"
