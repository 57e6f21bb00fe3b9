"""The rule catalogue: pure functions of a LinkContext that yield Findings."""
