from vascplan.cli import main

main()
