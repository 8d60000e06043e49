# An op-amp design as `show` gives it: U1's own supply current, its pins' voltages, its stress
# (the supply span V+ - V-, the voltage between its inputs, its dissipation) beside its
# ratings and operating range, and its 16 corner pieces with the figures that move the
# output. One stage on a single 12 V supply (inputs at the divider's mid-rail reference), one
# on a +/-15 V split supply (a span of 30 V). The search's output carries its timing, so it
# goes to a file; the designs' ids are fixed by their parts and stock lines, and the time a
# design was kept reads @TIME@. Then `analyze` on op-amp stages, and its refusals.
--db @DB@ init
--db @DB@ devices import @SRC@/data-demo/devices.csv
--db @DB@ stock import @SRC@/data-demo/stock.csv
--db @DB@ design --gain 10 --load 10k --supply 12 --zin 100k --band 20..20k --topology opamp-noninv --top 1 > @WORK@/single.txt
--db @DB@ show sd22b9cb2
--db @DB@ design --gain 5 --load 2k2 --supply 15 --split --zin 10k --topology opamp-inv-split --top 1 > @WORK@/split.txt
--db @DB@ show sf84f61ca
--db @DB@ analyze opamp-buffer --device SA-430 --supply 12 --load 10k --part RB=100k --part RA1=47k --part RA2=47k --part CIN=1u --part CREF=10u --part COUT=10u
--db @DB@ analyze opamp-buffer --device SQ-410 --supply 12 --load 10k --part RB=100k --part RA1=47k --part RA2=47k --part CIN=1u --part CREF=10u --part COUT=10u
--db @DB@ analyze opamp-buffer-split --device SA-430 --supply 12 --load 10k --part RB=100k --part CIN=1u
