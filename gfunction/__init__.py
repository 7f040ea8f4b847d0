"""Steepest-descent side: g-function, hyperelliptic curve, theta functions, model problem."""

from .gfunction import EdgeVariable, GFunction, g_function
from .outer import ModelProblem, gamma_factor, jump_residuals, model_problem
from .predict import BandCounts, EdgeZeros, GapZeros, Prediction, Predictor, RecurrencePrediction, harmonic_phases, predictor
from .szego import SzegoFunction, szego_function
from .hankel import HankelExpansion, expansion_support, hankel_expansion
from .local import EdgeParametrix, airy_model, bessel_model, edge_parametrix, matching_mismatch, soft_edge_zeros

__all__ = [
    "EdgeVariable", "GFunction", "g_function",
    "ModelProblem", "gamma_factor", "jump_residuals", "model_problem",
    "BandCounts", "EdgeZeros", "GapZeros", "Prediction", "Predictor", "RecurrencePrediction",
    "harmonic_phases", "predictor",
    "SzegoFunction", "szego_function",
    "HankelExpansion", "expansion_support", "hankel_expansion",
    "EdgeParametrix", "airy_model", "bessel_model", "edge_parametrix", "matching_mismatch", "soft_edge_zeros",
]
