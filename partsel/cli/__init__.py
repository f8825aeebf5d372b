"""partsel's command line (Typer). The app is :data:`partsel.cli.main.app`."""
