"""The safety caution every output of portflux carries (README, docs, template, demo, PFX_ABOUT)."""

CAUTION_LINES = (
    "Forces from these formulas feed the design of supports and restraints.",
    "The idealizations (steady flow in an inertial control volume, uniform or beta-corrected "
    "ports, frictionless closures) can under-predict real loads: start-up transients, water "
    "hammer, splashing and unsteady jets are not covered.",
    "Apply the safety factors and load cases of the governing code, have designs checked under "
    "licensed engineering practice, and treat high-pressure jets as hazardous.",
    "portflux is a calculation aid, not a substitute for engineering judgement.",
)

#: The caution as one paragraph.
CAUTION = " ".join(CAUTION_LINES)
