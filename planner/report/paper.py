"""Paper sizes of the drawings: ISO 216 A series, landscape, width x height [mm]."""

#: ISO 216 sheet sizes, landscape (width, height) [mm].
SHEETS = {"A4": (297, 210), "A3": (420, 297), "A2": (594, 420), "A1": (841, 594)}
