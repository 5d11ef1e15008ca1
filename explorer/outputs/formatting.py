"""Text shared by the dashboard and the command line, so both print the same digits."""
from __future__ import annotations

__all__ = ["format_minimum"]


def format_minimum(low) -> str:
    """The deepest minimum of a `porefill.physics.pore.wall_potential.Minimum`, as every view prints it."""
    return (f"deepest minimum {low.depth_k:.2f} K at x = {low.x_angstrom:.2f} Å, y = {low.y_angstrom:.2f} Å "
            f"({low.radius_angstrom:.2f} Å from the centre, {low.wall_distance_angstrom:.2f} Å from the nearest wall)")
