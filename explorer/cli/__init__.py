"""Command-line commands kept in modules of their own: each module here has ``register(sub)``, which adds
its subparser (with ``set_defaults(func=...)``) to `porefill`'s. Shared option groups and the one-line error
type are in `porefill.explorer.cli.main` (`add_pore_options`, `add_model_options`, `model_scenario`, `UsageError`)."""
