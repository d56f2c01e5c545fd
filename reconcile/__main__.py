from reconcile.cli import main

main()
