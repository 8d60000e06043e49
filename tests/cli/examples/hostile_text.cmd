# Text is checked at the door: bins, notes and names must be UTF-8 without control characters.
# A Latin-1 file (as a spreadsheet saves it in Western Europe) is refused with every bad field
# named by column, line and byte; declared with --encoding it imports. Control characters (a NUL,
# a line break inside a quoted note, a tab, an escape sequence) and a UTF-16 file are refused.
--db @DB@ init
--db @DB@ stock import @EXAMPLES@/latin1.csv
--db @DB@ stock import --encoding latin1 @EXAMPLES@/latin1.csv
--db @DB@ stock import --encoding cp1252 @EXAMPLES@/cp1252.csv
--db @DB@ stock import --encoding ebcdic @EXAMPLES@/cp1252.csv
--db @DB@ stock import @EXAMPLES@/control_chars.csv
--db @DB@ stock import @EXAMPLES@/utf16.csv
--db @DB@ stock list
--db @DB@ stock export
--db @DB@ --json stock list --kind C
