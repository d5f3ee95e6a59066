"""Stage 4, input and output at the edges: mesh files and study files into a model (forces
recovered from displacements with the static solver), atomic writing of results, the terminal
progress bar.  Everything below this stage is testable with arrays."""
