"""matplotlib as the report package uses it: files only, and text drawn as typed."""

from __future__ import annotations


def pyplot():
    """Pyplot on the Agg backend, with mathtext off.

    Names come from users: a ``$`` in a project or outlet name must be drawn as a dollar
    sign, not parsed as mathematics (which fails on unbalanced signs).  Nothing the
    report draws uses mathtext.
    """
    import matplotlib

    matplotlib.use("Agg")
    matplotlib.rcParams["text.parse_math"] = False
    import matplotlib.pyplot as plt

    return plt
