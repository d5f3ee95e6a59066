"""Stage 5, the pipeline: ``framebuckle.solve`` (read -> sub-divide -> assemble -> solve -> check
the solution) and its Result / CaseResult."""
