from torqlog.cli import main

main()
