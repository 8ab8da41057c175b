"""netdim: audit trained models by their ANOVA structure.

Mean dimension and Sobol' indices of every output and hidden unit, with
confidence intervals from randomized quasi-Monte Carlo.
"""

from .advice import advise_function, advise_model
from .advice_results import AdviceResult
from .comparison import Gates, compare_models
from .design import Design
from .errors import UserError
from .inputs import InputSpec, Law, load_spec, parse_spec
from .models.open import open_model
from .quadrature import PreIntegrated
from .results import AuditResult, Estimate, FeatureEstimate, LayerResult, OutputResult, UnitResult
from .studies import audit_function, audit_model

__all__ = [
    "AdviceResult",
    "AuditResult",
    "Design",
    "Estimate",
    "FeatureEstimate",
    "Gates",
    "InputSpec",
    "Law",
    "LayerResult",
    "OutputResult",
    "PreIntegrated",
    "UnitResult",
    "UserError",
    "advise_function",
    "advise_model",
    "audit_function",
    "audit_model",
    "compare_models",
    "load_spec",
    "open_model",
    "parse_spec",
]

__version__ = "0.1.0"
