"""The cautions every output carries, written once for the CLI, the files and the pages.

A wrong plan can hurt people (bursts, contamination through pressure below
atmospheric, surge), so every output states these and defers to local codes and a
licensed engineer.
"""

#: The full cautions, in the order outputs list them.
CAUTIONS = (
    "Planning aid only: elevations from a DEM can be wrong by several metres (more under "
    "trees); confirm levels by field survey before construction.",
    "Static pressures assume every outlet closed with the line full; surge is a first "
    "estimate (Joukowsky, Michaud) for the stated closure time and can be higher at tees and "
    "size changes: close valves slowly.",
    "Sub-atmospheric pressure lets contaminated water in at leaks: never accept it in a "
    "drinking-water line.",
    "Local codes, standards and a licensed engineer's review take precedence over this result.",
)

#: One line, where there is room for no more (terminal, drawing footer, map box).
SHORT_CAUTION = ("Planning aid only: confirm levels in the field; local codes and a licensed "
                 "engineer take precedence.")
