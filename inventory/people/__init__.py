"""People who sign in to the web app and their roles (sits at the core level: features do
not import it; the faces do)."""
