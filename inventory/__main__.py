from inventory.cli.main import run

run()
