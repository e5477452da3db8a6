from tapgauge.cli import run

run()
