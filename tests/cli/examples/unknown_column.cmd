# An unknown column is rejected (docs/interface.md, CSV files), and nothing is imported.
--db @DB@ init
--db @DB@ stock import @EXAMPLES@/unknown_column.csv
--db @DB@ stock list
