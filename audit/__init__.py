"""netdim: audit trained models by their ANOVA structure.

Mean dimension and Sobol' indices of every output and hidden unit, with
confidence intervals from randomized quasi-Monte Carlo.
"""

from .design import Design
from .errors import UserError
from .inputs import InputSpec, Law, load_spec, parse_spec
from .models.open import open_model
from .results import AuditResult, Estimate, FeatureEstimate, LayerResult, OutputResult, UnitResult
from .studies import audit_function, audit_model

__all__ = [
    "AuditResult",
    "Design",
    "Estimate",
    "FeatureEstimate",
    "InputSpec",
    "Law",
    "LayerResult",
    "OutputResult",
    "UnitResult",
    "UserError",
    "audit_function",
    "audit_model",
    "load_spec",
    "open_model",
    "parse_spec",
]

__version__ = "0.1.0"
