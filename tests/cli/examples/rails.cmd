# Rails as the user wires them. A PNP stage on a positive 9 V rail (one battery, ground at its
# - terminal) is turned over: its emitter toward the + rail, every node above ground; an NPN
# stage on a negative rail is the mirror. The pick list says the rail and which way every
# electrolytic goes; the JSON carries each capacitor's DC over every corner and the nets of
# its leads in the exported netlist. The search's output carries its timing, so it goes to a
# file; the designs' ids are fixed by their parts and stock lines.
--db @DB@ init
--db @DB@ devices import @SRC@/data-demo/devices.csv
--db @DB@ stock import @SRC@/data-demo/stock.csv
--db @DB@ design --gain 4 --load 10k --supply 9 --zin 47k --device SJ-P31 --device SQ-510 --stages 1 --top 1 > @WORK@/pnp.txt
--db @DB@ pick s112731f8
--db @DB@ show s112731f8 --spice @WORK@/pnp.cir > @WORK@/show.txt
--db @DB@ design --gain 4 --load 10k --supply -9 --zin 47k --device SQ-410 --stages 1 --top 1 --spread box > @WORK@/npn.txt
--db @DB@ pick saab56892 --json
# Supplies that are not one rail, and spread models that do not exist.
--db @DB@ design --gain 4 --load 10k --supply 0 --zin 47k
--db @DB@ design --gain 4 --load 10k --supply -9..9 --zin 47k
--db @DB@ design --gain 4 --load 10k --supply 9..7 --zin 47k
--db @DB@ design --gain 4 --load 10k --supply -7..-9.6 --zin 47k --spread wide
--db @DB@ analyze bjt-follower --device SQ-510 --supply 9..12 --load 10k --part R1=47k --part R2=47k --part RE=4k7 --part CIN=1u --part COUT=10u
