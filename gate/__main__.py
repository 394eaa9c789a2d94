from gate.cli import main

main()
