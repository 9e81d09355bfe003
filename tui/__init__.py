"""protomix terminal front ends: the full-screen explorer and the line commands.

Nothing here computes chemistry: every number comes from :mod:`chem`.
"""

#: The release, as in pyproject.toml (a test keeps the two equal). Read from here, not from the
#: installed metadata, so that ``protomix --version`` starts in a few tens of milliseconds.
__version__ = "0.1.0"
