# check on a sound database: every section ok, exit 0. The demo can keep its database in a
# named file, which then serves any other command.
demo --db @DB@ --json > @WORK@/demo.json
--db @DB@ check
--db @DB@ check --json
--db @DB@ stock list --kind jfet
--db @DB@ stock list --low --kind C
demo --db @DB@
