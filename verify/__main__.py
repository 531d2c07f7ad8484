from verify.cli import run

run()
