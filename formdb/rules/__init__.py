"""The rule engine: rules (one per file or small family), a registry, profiles, the engine.

``check_resolved(formula, reference, profile)`` is the entry point; ``load_profile(name_or_path)``
reads a profile; ``default_registry()`` lists the rules.
"""
