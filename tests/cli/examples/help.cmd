# Help exits 0 and prints on stdout; it explains the CSV columns INTERFACE.md fixes.
stock import --help
