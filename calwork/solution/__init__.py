"""Solution calorimetry: electrical calibration, reaction runs, blanks, vaporisation,
Debye–Hückel / Pitzer ΦL and extrapolation to infinite dilution, thermochemical cycles."""
