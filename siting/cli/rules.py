"""`siting rules`: the bundled rule sets listed, or one printed in words."""

from __future__ import annotations

from siting.cli.terminal import EXIT_OK
from siting.presentation.rule_text import rule_set_in_words
from siting.readers.rules import list_rule_sets, load_rule_set
from siting.readers.tables import load_tables


def run(args) -> int:
    if args.rule_set is None:
        for rule_id, title in list_rule_sets():
            print(f"{rule_id}  {title}")
        return EXIT_OK
    tiers = [tier["id"] for tier in load_tables().thresholds]
    print(rule_set_in_words(load_rule_set(args.rule_set, tiers)))
    return EXIT_OK
