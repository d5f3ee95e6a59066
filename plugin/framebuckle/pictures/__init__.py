"""Stage 7, pictures: mode curves between the nodes, off-screen rendering, plots, the HTML report,
the interactive viewer and the PyVista accessor ``grid.buckle``."""
