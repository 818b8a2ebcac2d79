"""The safety caution shown wherever sizing, checks or suggestions appear."""

SAFETY_CAUTION = (
    "Screening estimate only: these figures come from empirical rules (Chvorinov, "
    "the modulus rule, Caine's curve, feed volume) and this shop's own history. "
    "Molten metal and pressure-containing or safety-critical castings can hurt people. "
    "The responsible methods engineer must confirm every riser by solidification "
    "simulation or trial pours and by inspection to the governing specification; "
    "local codes, customer specifications and licensed practice take precedence."
)

# The command line's form: two lines, once per output, saying where the full text is.
SAFETY_CAUTION_SHORT = (
    "CAUTION: screening estimate only; the responsible methods engineer must confirm every riser\n"
    "(simulation or trial pours, inspection). Full caution: README.md 'Cautions', the dashboard, any report."
)
