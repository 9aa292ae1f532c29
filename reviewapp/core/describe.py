"""A plain-text summary of a record: what ``reviewapp info`` prints."""

from __future__ import annotations

from reviewapp.core.record import Record


def _lead_line(record: Record) -> list[str]:
    rows = []
    for lead in record.leads:
        flags = [
            f
            for f, on in (("derived", lead.derived), ("flat", lead.flat), ("missing", lead.missing))
            if on
        ]
        facts = []
        label = lead.name
        if lead.original_name and lead.original_name.lower() != lead.name.lower():
            label = f"{lead.name} (file name {lead.original_name})"
        if lead.adc_gain_per_mv is not None:
            facts.append(f"gain {lead.adc_gain_per_mv:g} adu/mV")
        if lead.adc_baseline is not None:
            facts.append(f"baseline {lead.adc_baseline}")
        if lead.adc_resolution_bits:
            facts.append(f"{lead.adc_resolution_bits}-bit")
        if lead.signal_file:
            facts.append(lead.signal_file)
        text = f"  {label:<6}"
        if flags:
            text += f" [{', '.join(flags)}]"
        if facts:
            text += "  " + ", ".join(facts)
        rows.append(text.rstrip())
    return rows


def describe_record(record: Record) -> str:
    """Multi-line description: format, file, rate, duration, leads with flags, subject, notes.

    >>> from reviewapp.core.record import record_from_array
    >>> import numpy as np
    >>> print(describe_record(record_from_array(np.zeros((500, 1)), 500, ["V1"])).splitlines()[1])
    format:       array
    """
    s = record.subject
    total_ms = round(record.duration_s * 1000)
    hours, rest_ms = divmod(total_ms, 3_600_000)
    minutes, rest_ms = divmod(rest_ms, 60_000)
    seconds = rest_ms / 1000
    duration = (
        f"{int(hours)} h {int(minutes)} min {seconds:.3f} s"
        if hours
        else f"{int(minutes)} min {seconds:.3f} s"
        if minutes
        else f"{seconds:.3f} s"
    )
    units = sorted({lead.units for lead in record.leads if not lead.derived} or {"mV"})
    if units == ["mV"]:
        units_line = "mV"
    else:
        units_line = f"{', '.join(units)} in the file, served as mV"
    lines = [
        f"record:       {record.name}",
        f"format:       {record.source_format or 'unknown'}",
    ]
    if record.source_path is not None:
        lines.append(f"file:         {record.source_path}")
    lines += [
        f"sampling:     {record.fs_hz:g} Hz",
        f"duration:     {duration} ({record.n_samples} samples)",
        f"units:        {units_line}",
        f"leads ({record.n_leads}):",
        *_lead_line(record),
    ]
    subject = []
    if s.subject_id:
        subject.append(f"id {s.subject_id}")
    if s.age_years is not None:
        subject.append(f"age {s.age_years:g} y")
    if s.sex:
        subject.append(s.sex)
    if s.acquired_at is not None:
        if s.acquired_time_known:
            subject.append(f"acquired {s.acquired_at.isoformat(sep=' ')}")
        else:  # a date only: no made-up midnight
            subject.append(f"acquired {s.acquired_at.date().isoformat()} (time not given)")
    lines.append(f"subject:      {', '.join(subject) if subject else 'not given'}")
    if s.comments:
        lines.append(f"comments:     {len(s.comments)} line(s)")
        lines += [f"  {c}" for c in s.comments[:20]]
        if len(s.comments) > 20:
            lines.append(f"  ... {len(s.comments) - 20} more")
    if record.notes:
        lines.append("notes:")
        lines += [f"  - {n}" for n in record.notes]
    return "\n".join(lines)
