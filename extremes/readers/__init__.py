"""Readers of a gauge record's file formats, behind :func:`extremes.records.read_record`.

* :mod:`.text`: delimited text (comma, semicolon, tab or whitespace; optionally gzip), sniffed, columns
  chosen, times parsed vectorised;
* :mod:`.netcdf`: NetCDF (CF conventions), a water-level variable on a UTC time coordinate;
* :mod:`.common`: offsets, digests and UTC conversion shared by both; :mod:`.formats`: their constants.

The project's other input files have their readers beside the stage that uses them:
:func:`extremes.extremal.samples.read_annual_maxima` (annual-maxima table),
:func:`extremes.sealevel.read_scenarios` (sea-level-rise scenarios), :func:`extremes.corrections.read_corrections`
(known corrections), :mod:`extremes.batch.inputs` (manifest) and :mod:`extremes.batch.gridded` (model output).
"""
