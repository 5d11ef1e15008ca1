"""porefill's dashboard, command line and files. In a notebook::

    from porefill.explorer import app
    app("demo-hexagon-helium")       # or a Scenario, a scenario file's path, a ScenarioDocument

Importing this package is cheap: Panel and the physics load when `app` is first called.
"""


def app(scenario=None):
    """The dashboard as a Panel object (displays in Jupyter; `.servable()` or `pn.serve` serve it)."""
    from porefill.explorer.views.dashboard import notebook_app

    return notebook_app(scenario)
