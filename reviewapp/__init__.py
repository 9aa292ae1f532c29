"""reviewapp: a desktop workbench for over-reading resting 12-lead ECGs.

Automated measurements must be verified by a qualified clinician. This is not a
certified medical device; local protocols and licensed practice govern.
"""

__version__ = "0.4.1"

CLINICAL_CAUTION = (
    "Automated measurements must be verified by a qualified clinician. "
    "reviewapp is not a certified medical device; local protocols and licensed "
    "practice govern every reading."
)
