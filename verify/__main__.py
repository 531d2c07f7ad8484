from verify.cli import main

main()
