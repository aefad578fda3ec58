"""realbasis dashboard: the Dash face over the pipeline engine."""
