"""``python -m builder`` runs the periplus command line."""

from builder.commands import program

__all__ = []

# Guarded so that worker processes started by ``spawn`` (periplus hunt) do not run the command again.
if __name__ == "__main__":
    program()
