"""The riser design rules, pure: alloys and their constants, section geometry,
the published rules (Chvorinov, the modulus rule, Caine's curve, feed volume,
pressure control), riser sizing and the judging of a table of risers. Nothing
here reads or writes the log."""
