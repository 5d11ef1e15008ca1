"""Text shared by the dashboard and the command line, so both print the same digits."""
from __future__ import annotations

__all__ = ["format_minimum", "spreadsheet_safe"]


def format_minimum(low) -> str:
    """The deepest minimum of a `porefill.physics.pore.wall_potential.Minimum`, as every view prints it."""
    return (f"deepest minimum {low.depth_k:.2f} K at x = {low.x_angstrom:.2f} Å, y = {low.y_angstrom:.2f} Å "
            f"({low.radius_angstrom:.2f} Å from the centre, {low.wall_distance_angstrom:.2f} Å from the nearest wall)")


def spreadsheet_safe(value):
    """A CSV cell that a spreadsheet will not run: text (run names, file names, sources) that starts like a
    formula (= + - @, tab, carriage return) gets a leading apostrophe (common practice, no source); numbers
    pass unchanged. Every CSV porefill writes from user text goes through this."""
    if isinstance(value, str) and value[:1] in ("=", "+", "-", "@", "\t", "\r"):
        return "'" + value
    return value
