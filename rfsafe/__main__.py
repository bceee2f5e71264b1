from rfsafe.cli import main

main()
