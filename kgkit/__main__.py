from kgkit.cli import main

main()
