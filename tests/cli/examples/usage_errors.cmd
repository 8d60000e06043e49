# Mistakes a tired person makes: exit 1 and one `error:` line naming the field and the value
# (docs/interface.md, Exit status); nothing is written.
frobnicate
stock
stock frob
--db @DB@ stock list
--db @DB@ init
--db @DB@ stock add R 4k7
--db @DB@ stock add R 4k7 ten
--db @DB@ stock add R 4k7 -3
--db @DB@ stock add R 4,7k 10
--db @DB@ stock add L 10u 10
--db @DB@ stock add R 4k7 10 --volts 50
--db @DB@ stock add C 100n 10 --power 0.25
--db @DB@ stock add C 100n 10 --tol "5 percent"
--db @DB@ stock add NPN XX-999 10
--db @DB@ stock import @WORK@/nothing-here.csv
--db @DB@ stock export --json
--db @DB@ stock list --kind L
--db @DB@ stock list
