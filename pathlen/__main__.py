from pathlen.cli import main

main()
