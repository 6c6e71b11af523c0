"""Pure computation: constants, limits, rules, run lengths, capability. No file I/O, no printing."""
