"""Reporters: turn findings into text, JSON, SARIF, annotations and diffs. No physics here."""
