from verify.start import run

run()
