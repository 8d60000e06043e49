# An unknown column is rejected (INTERFACE.md), and nothing is imported.
--db @DB@ init
--db @DB@ stock import @EXAMPLES@/unknown_column.csv
--db @DB@ stock list
