"""Tide: astronomy, constituents, nodal corrections, harmonic analysis and prediction, tidal datums.

Submodules are imported on demand; the main entry points are
:func:`extremes.tide.harmonic.analyse_tide`, :func:`extremes.tide.harmonic.predict_tide`,
:class:`extremes.tide.harmonic.TideModel` and :func:`extremes.tide.datums.tidal_datums`.
"""
