# Removing a line takes it off the list; its history stays in the ledger.
--db @DB@ init
--db @DB@ stock add C 10u 30 --volts 6.3 --dielectric electrolytic --bin C2
--db @DB@ stock add C 10u 25 --volts 25 --dielectric electrolytic --bin C2
--db @DB@ stock remove C:10u
--db @DB@ stock remove 1 --reason "6.3 V parts are useless on the 12 V builds"
--db @DB@ stock list
--db @DB@ stock remove 1
