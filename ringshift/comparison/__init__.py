"""The comparer: records, assignment, evidence, verdicts and candidate ranking."""
