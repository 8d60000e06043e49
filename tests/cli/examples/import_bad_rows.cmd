# A file with any bad row imports nothing and lists every bad row with its line number
# (docs/interface.md): line 3 bad value, 4 non-numeric qty, 5 unknown kind, 6 negative qty.
--db @DB@ init
--db @DB@ stock import @EXAMPLES@/bad_rows.csv
--db @DB@ stock list --json
