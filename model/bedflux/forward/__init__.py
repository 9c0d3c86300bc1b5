"""The forward interface that calibration and planning use: observation operators (``observe``)
and :class:`bedflux.forward.sensitivity.Forward` (predicted data and their Jacobian)."""
