"""Rule files are validated on load; errors name the file, the requirement and the key."""

from __future__ import annotations

import pytest

from planner import rulesets
from planner.rulesets import RuleSetError

GOOD = """
format_version = 1
id = "my-rules"
title = "My rules"

[[requirement]]
id = "approaches"
title = "Approaches"
citation = "personal target"
scope = "pilot"

  [[requirement.path]]
  id = "p"
  window = { unit = "days", length = 30 }
  task = [ { unit = "approaches", min = 2 } ]
"""


def test_every_builtin_rule_set_loads_and_cites_each_requirement():
    for name in rulesets.BUILTIN:
        rule_set = rulesets.load_builtin(name)
        assert rule_set.id == name
        assert all(req.citation.strip() for req in rule_set.requirements)


def test_a_users_own_file_loads(tmp_path):
    path = tmp_path / "mine.toml"
    path.write_text(GOOD)
    (rule_set,) = rulesets.resolve(f"{path}")
    assert rule_set.id == "my-rules" and rule_set.requirements[0].paths[0].tasks[0].minimum == 2
    both = rulesets.resolve(f"faa-part61,{path}")
    assert [r.id for r in both] == ["faa-part61", "my-rules"]


BAD = [
    pytest.param(GOOD.replace('title = "Approaches"\n', 'title = "Approaches"\ncolour = "red"\n'),
                 "requirement 'approaches': key 'colour': unknown key", id="unknown key"),
    pytest.param(GOOD.replace('citation = "personal target"\n', ""),
                 "requirement 'approaches': key 'citation': missing", id="missing citation"),
    pytest.param(GOOD.replace('unit = "days"', 'unit = "fortnights"'),
                 "requirement 'approaches': key 'path[0].window.unit': unknown window unit 'fortnights'", id="bad window unit"),
    pytest.param(GOOD.replace('unit = "approaches"', 'unit = "loops"'),
                 "requirement 'approaches': key 'path[0].task[0].unit': unknown task unit 'loops'", id="bad task unit"),
    pytest.param(GOOD.replace("min = 2", "min = -1"),
                 "requirement 'approaches': key 'path[0].task[0].min': expected a positive number", id="negative minimum"),
    pytest.param(GOOD.replace('scope = "pilot"', 'scope = "pilot"\nregain = "grace"'),
                 "requirement 'approaches': key 'grace': missing", id="grace without window"),
    pytest.param(GOOD.replace('id = "p"', 'id = "p"\neffective_from = "someday"'),
                 "requirement 'approaches': key 'path[0].effective_from': expected a date", id="bad date"),
    pytest.param(GOOD + '\n  [[requirement.check]]\n  kinds = ["golf-lesson"]\n  window = { unit = "days", length = 5 }\n',
                 "requirement 'approaches': key 'check[0].kinds': unknown value 'golf-lesson'", id="unknown check kind"),
    pytest.param(GOOD.replace("length = 30", "length = 30, current_month_counts = false"),
                 "key 'path[0].window.current_month_counts': only applies to calendar-months windows", id="misplaced option"),
    pytest.param(GOOD + GOOD[GOOD.index("[[requirement]]"):],
                 "requirement 'approaches': key 'id': two requirements share this id", id="duplicate requirement"),
    pytest.param(GOOD.replace("format_version = 1", "format_version = 7"),
                 "key 'format_version': unsupported version 7", id="format version"),
    pytest.param("format_version = 1\nid = [", "not valid TOML", id="toml syntax"),
]


@pytest.mark.parametrize("text, message", BAD)
def test_rule_file_errors_name_file_requirement_and_key(tmp_path, text, message):
    path = tmp_path / "broken.toml"
    path.write_text(text)
    with pytest.raises(RuleSetError) as info:
        rulesets.load_file(path)
    assert str(info.value).startswith(str(path) + ": ")
    assert message in str(info.value)


def test_unknown_rule_set_names_are_refused_with_the_choices():
    with pytest.raises(RuleSetError, match="unknown rule set 'faa-part91'.*faa-part61"):
        rulesets.resolve("faa-part91")
    with pytest.raises(RuleSetError, match="given twice"):
        rulesets.resolve("faa-part61,faa-part61")
    with pytest.raises(RuleSetError, match="cannot read rule file"):
        rulesets.resolve("/nonexistent/rules.toml")
