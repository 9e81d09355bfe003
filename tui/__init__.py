"""protomix terminal front ends: the full-screen explorer and the line commands.

Nothing here computes chemistry: every number comes from :mod:`chem`.
"""
