"""The catalogue and the lead checks agree on the thresholds they name."""


def test_the_sequence_criterion_text_names_the_threshold_applied():
    """The catalogue's criterion and the check read one value (the text once said 0.4 while
    the check applied 0.2)."""
    from reviewapp.core.interpret.catalogue import entry
    from reviewapp.core.interpret.lead_checks import SEQUENCE_GAIN

    assert f"more than {SEQUENCE_GAIN:g} in sum" in entry("lead_check.precordial_sequence").criteria
