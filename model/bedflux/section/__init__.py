"""The section model: grid, materials, boundary terms, linear solves, steady and transient
stepping, fluxes and budgets, events, the result Dataset, and ``simulate`` that runs them in order.

Modules: ``grid``, ``materials``, ``bedform`` (dynamic head over bedforms), ``operator``
(conductance matrix), ``discretisation`` (the discretised section and its boundary terms),
``linear``, ``steady``, ``transient``, ``fluxes``, ``flood`` (peak stage), ``events``
(reversals, bank storage), ``results`` (the Dataset), ``simulate``.
"""
