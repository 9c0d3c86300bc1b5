"""Ensembles: many runs of one scenario over uncertain values and heterogeneous beds.

``spec`` reads ensemble files and the API's dicts, ``distributions`` draws uncertain values,
``posterior`` draws a fit's calibrated values, ``fields`` makes spatially correlated random
fields (GSTools), ``members`` runs one member, ``engine`` runs members on dask.distributed,
``results`` gathers them into the ensemble Dataset, ``summary`` and ``figures`` describe it,
``run`` is :func:`bedflux.ensemble` and ``command`` the ``ensemble`` verb.
"""
