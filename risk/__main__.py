"""``python -m risk``: the same command line as the ``risk`` script."""

from risk.cli import app

if __name__ == "__main__":
    app(prog_name="risk")
