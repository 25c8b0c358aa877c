from lumeval.cli import main

main()
