"""The cautions gcplan shows wherever a plan could hurt people or equipment.

One place for the wording, so that the terminal, the figures and the printed
log say the same thing.
"""

#: Printed under every plan and table.
PLAN_CAUTION = (
    "Caution: the telescope's and the observatory's own limits and rules (wind, humidity, dome, "
    "horizon, sun avoidance) and the operators' word come before any plan."
)

#: The short form, for the foot of a figure or a printed page.
SHORT_CAUTION = "The observatory's own limits and rules come before any plan."

#: When a plan reaches into civil twilight.
CIVIL_TWILIGHT_CAUTION = (
    "civil twilight chosen: the sky is bright and the Sun only 6° down; mind the sun-avoidance "
    "limit and the observatory's rules for opening the dome in twilight"
)
