"""Pure computation: constants, limits, rules, run lengths, capability, design. No file I/O, no printing.

The values shared by the layers above are typed here once: `sigma.SigmaMethod` (how sigma was found, with its
words), `parameters.EwmaParameters` / `CusumParameters` (names and defaults of lambda, L, k, h) and `timing`
(ATS, false alarms per month, the in-control target).
"""
