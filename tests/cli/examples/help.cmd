# Help exits 0 and prints on stdout; it explains the stock CSV columns (docs/interface.md).
stock import --help
