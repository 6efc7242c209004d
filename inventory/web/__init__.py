"""The shop's web app: a face over the feature services, like the command line."""
