# Small things a tired person types, each answered plainly (exit 1, one error line, nothing written).
# An empty --db is refused, not taken for the default database.
--db= stock list
--db @DB@ init
# Counts are summed in 64 bits: two full lines print their true total.
--db @DB@ stock add R 10k 2147483647 --bin A1
--db @DB@ stock add R 10k 2147483647 --bin A2
--db @DB@ stock add R 10k 1 --bin A2
--db @DB@ stock list
# A capacitor's value states its scale: a bare 1 or 1.5 is refused alike (it would be farads).
--db @DB@ stock add C 1 5
--db @DB@ stock add C 1.5 5
--db @DB@ stock add C 1u 5
--db @DB@ stock add C 1F 5
--db @DB@ stock adjust C:1 +1 --reason recount
# The gain window speaks of the gain.
design --gain 10 --load 10k --supply 12 --zin 100k --gain-tol 150%
design --gain 10 --load 10k --supply 12 --zin 100k --gain-tol 0%
# Long values are cut in messages.
--db @DB@ stock adjust R:10k@AAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAA +1 --reason recount
--db @DB@ show s0123456789abcdefs0123456789abcdefs0123456789abcdefs0123456789abcdefs0123456789abcdefs0123456789abcdef
# The database must be a file: a folder or a device is refused.
--db @WORK@ stock list
--db /dev/null stock list
--db /dev/null init
