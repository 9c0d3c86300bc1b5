"""What a run leaves behind: result file, summary, figures, animation, and the output folder rules.

Reads results (:mod:`bedflux.section.results`) only; never discretises or solves.
"""
