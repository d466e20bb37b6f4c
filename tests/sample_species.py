"""The sample scenario's gas-phase species as reaction-file tables, for tests that write their own reaction files.

Each table names its logs under the placeholder ``{s}``, which the test fills with ``str.format(s=<sample_outputs>)``
(so a text built here may hold other placeholders of the test's own)."""

#: species key -> (its frequency log, its MP2/cc-pVTZ single point), under sample_outputs/
SAMPLE_SPECIES = {
    "hcn": ("gas/hcn.out", None),
    "hnc": ("gas/hnc.out", None),
    "ts_hcn": ("gas/ts_hcn.out", None),
    "ch4": ("gas/ch4.out", "sp/ch4_mp2.out"),
    "h": ("gas/h_atom.out", "sp/h_atom_mp2.out"),
    "ts_abstraction": ("gas/ts_abstraction.out", "sp/ts_abstraction_mp2.out"),
    "ch3": ("gas/ch3.out", "sp/ch3_mp2.out"),
    "h2": ("gas/h2.out", "sp/h2_mp2.out"),
}


def species_tables(*names: str, single_points: bool = False) -> str:
    """``[species.NAME]`` tables of ``names``: each its log and, with ``single_points``, its single point if any."""
    lines = []
    for name in names:
        log, single_point = SAMPLE_SPECIES[name]
        lines += [f"[species.{name}]", f'logs = "{{s}}/{log}"']
        if single_points and single_point:
            lines.append(f'single_point = "{{s}}/{single_point}"')
    return "\n".join(lines) + "\n"
