"""Stage 3, the solver: constraints and factorization (mechanism check), the eigensolvers, the
independent checks of every eigensolution (residuals, Sturm counts), the upward search, preload,
the warping DOFs, the linear static solution and the mesh-adequacy extrapolation."""
