# Transistor types from their datasheet figures (invented types; ranges typical of small-signal
# parts, from memory), measured pieces, and stock that refers to the types. The pieces file
# has a bad row (an hFE on a JFET), so none of it is imported; then a good one.
--db @DB@ init
--db @DB@ devices add SJ-101 --kind NJFET --idss 1m..5m --idss-typ 2.5m --vp -0.5..-3 --lambda 0.005 --cgs 4.5p --cgd 1.5p
--db @DB@ devices add SQ-410 --kind NPN --hfe 110..450 --hfe-typ 250 --is 1.5e-14 --vaf 80 --cje 6p --cjc 3p
--db @DB@ devices add SQ-410 --kind NPN --hfe 110..450
--db @DB@ devices add SQ-410 --kind NPN --hfe 100..400 --vaf 80 --replace
--db @DB@ devices add SQ-999 --kind NPN --idss 1m..5m
--db @DB@ devices add SJ-999 --kind NJFET --vp -1..-3
--db @DB@ devices add SJ-999 --kind NJFET --idss 1m..5m --vp 1..3
--db @DB@ stock add NJFET SJ-101 12 --bin D1
--db @DB@ stock add NPN SJ-101 12 --bin D1
--db @DB@ devices import --pieces @EXAMPLES@/pieces_bad.csv
--db @DB@ devices import --pieces @EXAMPLES@/pieces.csv
--db @DB@ devices list
--db @DB@ devices list --json
