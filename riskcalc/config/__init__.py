"""Configuration: the scenario file, its schema, and building the model from it."""
