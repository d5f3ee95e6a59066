"""framebuckle: elastic critical load factors and buckling modes of frames and trusses.

A post-processor for linear static runs: reads line-element meshes with
member axial forces, solves ``(K + lambda Kg) phi = 0``, writes modes back.

alpha_cr is an elastic indicator, not a resistance; the governing local
code and a qualified engineer decide.
"""

from .pipeline.api import solve
from .errors import FrameBuckleError, InputError, ModelError, OutputError, SolverError
from .pipeline.results import CAUTIONS, CaseResult, Result

__version__ = "0.1.0"
__all__ = ["solve", "Result", "CaseResult", "CAUTIONS", "FrameBuckleError", "InputError",
           "ModelError", "SolverError", "OutputError", "__version__"]
