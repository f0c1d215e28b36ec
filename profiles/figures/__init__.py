"""Figures drawn with matplotlib only; no spectrum is computed here.

One module per kind of figure (e.g. :mod:`profiles.figures.map`, the wavelength map of
along-track windows); :mod:`profiles.figures.style` holds colours, line widths and symbols.
"""
