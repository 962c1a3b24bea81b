from arrange.cli import main

main()
