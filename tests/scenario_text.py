"""[[source]] tables shared by tests that write scenarios of their own on the invented demo's
inputs: one proposed finishing-pig house (the demo's H1 without its outlet and building)."""

ONE_HOUSE = """
[[source]]
id = "H1"
kind = "point"
x = 500040.0
y = 5799965.0
height_m = 7.5
role = "proposed"
livestock = "finishing_pig"
housing = "fully_slatted"
places = 2400
abatement = "acid_scrubber"
"""
