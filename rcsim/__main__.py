"""``python -m rcsim ...`` runs the rcsim command."""

from .cli.group import main

main(prog_name="rcsim")
