"""``python -m rcsim.cli ...`` runs the rcsim command."""

from .group import main

main(prog_name="rcsim")
