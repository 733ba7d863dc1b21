from formdb.cli.main import main

main()
