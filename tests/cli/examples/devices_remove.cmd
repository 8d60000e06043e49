# Taking a transistor type off the list: refused while stock lines, measured pieces or kept
# designs name it; with --cascade its lines are written off through the ledger, its pieces
# deleted, in one transaction. The ledger keeps the history; the type can come back.
--db @DB@ init
--db @DB@ devices add SJ-101 --kind NJFET --idss 1m..5m --vp -0.5..-3
--db @DB@ devices add SJ-102 --kind NJFET --idss 2m..6m --vp -1..-4
--db @DB@ devices add SQ-410 --kind NPN --hfe 110..450
--db @DB@ stock add NJFET SJ-101 12 --bin D1
--db @DB@ stock add NJFET SJ-101 3 --bin D2
--db @DB@ devices measure SJ-101 --idss 2.9m --vp -1.45 --label J4
--db @DB@ devices remove SJ-102
--db @DB@ devices remove SJ-101
--db @DB@ devices remove sj-101 --cascade --reason "type discontinued"
--db @DB@ devices remove SJ-101
--db @DB@ devices remove NO-SUCH
--db @DB@ devices list
--db @DB@ stock list
--db @DB@ --json stock list
--db @DB@ stock add NJFET SJ-101 1
--db @DB@ devices add SJ-101 --kind NJFET --idss 1m..5m --vp -0.5..-3
--db @DB@ stock add NJFET SJ-101 1 --bin D1
--db @DB@ --json devices remove SQ-410
--db @DB@ check
