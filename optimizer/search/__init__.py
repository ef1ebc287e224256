"""The search engine: design space, vectorized evaluation, exhaustive and evolutionary search, front assembly, field verification."""
