"""Decision: tolerable-risk reference lines, engineering economics, alternatives."""
