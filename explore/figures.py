"""One palette and one way to save a picture, for every figure hopscape draws.

The charts (:mod:`explore.charts`), the maps (:mod:`explore.maps`) and the
pictures of one drop (:mod:`explore.plots`) take their line and bar colours
from :data:`OKABE_ITO` and write their files through :func:`save_figure`.

References
----------
.. [1] Okabe, M., Ito, K. (2008). Color universal design (CUD): how to make
   figures and presentations that are friendly to colorblind people.
"""
from __future__ import annotations

from pathlib import Path

from .files import atomic_write

__all__ = ["OKABE_ITO", "DPI", "save_figure"]

#: Okabe & Ito (2008) colour-blind-safe palette [1].
OKABE_ITO = {"orange": "#E69F00", "sky": "#56B4E9", "green": "#009E73", "yellow": "#F0E442",
             "blue": "#0072B2", "red": "#D55E00", "purple": "#CC79A7", "black": "#000000"}

#: Resolution of raster files (PNG). [dots per inch]
DPI = 130


def save_figure(fig, path_or_base, formats=None, dpi=DPI):
    """Write a figure to one file, or to one file per format, and release it.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        The figure; one made through pyplot is closed afterwards so that
        pyplot does not keep it, one made directly is left to the caller.
    path_or_base : str or pathlib.Path
        With ``formats`` None: the file, whose suffix gives the format.
        Otherwise the path without suffix, one file per format.
    formats : sequence of str, optional
        File formats without the dot (``("png", "svg")``).
    dpi : float, optional
        Resolution of raster formats. [dots per inch]

    Returns
    -------
    list of pathlib.Path
        The files written, in the order of ``formats``. Their folder is
        created when missing.
    """
    path_or_base = Path(path_or_base)
    paths = [path_or_base] if formats is None else [path_or_base.with_suffix("." + fmt) for fmt in formats]
    path_or_base.parent.mkdir(parents=True, exist_ok=True)
    for path in paths:
        with atomic_write(path) as tmp:   # the format follows tmp's ending, the same as path's
            fig.savefig(tmp, dpi=dpi)
    if fig.canvas.manager is not None:  # only pyplot's figures have a manager, and then pyplot is loaded
        import matplotlib.pyplot as plt

        plt.close(fig)
    return paths
