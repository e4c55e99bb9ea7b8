"""Instrument currency and proficiency planner (advisory tool)."""

CAUTION = (
    "Advisory only: the pilot in command decides. The current regulation text, "
    "your regulator, your instructors and local practice prevail over this tool."
)
