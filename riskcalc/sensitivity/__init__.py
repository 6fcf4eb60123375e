"""Sensitivity: SALib wrappers, the risk model's factors, the evaluator, the mean-mode gap by source."""
