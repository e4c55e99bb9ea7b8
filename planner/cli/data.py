"""Subcommands for the database and the logbook data: init, demo, serve, pilots, export, import."""

from __future__ import annotations

import argparse


def register(sub: argparse._SubParsersAction) -> None:
    """Add this area's subcommands to the ``planner`` parser."""
