"""Dashboard views: each one a `pn.viewable.Viewer` over the shared ExplorerState."""
