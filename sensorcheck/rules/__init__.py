"""Rules: the engine (registry, profiles, waivers) and one module per rule family.

Public API (what the rest of sensorcheck calls)::

    from sensorcheck.rules.engine import known_rules, catalogue, run_rules, render_catalogue
"""
