# Characterising the pieces in the drawer. The readings are those of an N-channel piece
# simulated in ngspice (NJF VTO=-1.45 BETA=1.37931m LAMBDA=0, so IDSS = BETA*VTO^2 = 2.9 mA;
# gate at ground, drain on 12 V, `.op`), rounded to four digits as a bench meter shows them:
# V(source) 0.2116 V across 100 ohms, 0.5385 V across 470, 0.9041 V across 2k2. The fit must
# give back IDSS 2.9 mA and VP -1.45 V within 1 %.
devices fit --self-bias 100:0.2116 --self-bias 470:0.5385 --self-bias 2k2:0.9041
# Two of them fix the two figures exactly (zero residuals).
devices fit --self-bias 100:0.2116 --self-bias 2k2:0.9041 --json
# Readings no JFET gives: every JFET's current falls as its gate goes more negative, so a larger
# source resistor gives a larger source voltage and a smaller current; a current that hardly
# changes with RS would need a pinch-off of hundreds of volts.
devices fit --self-bias 1k:1 --self-bias 2k2:0.8
devices fit --self-bias 1k:1 --self-bias 2k2:2.5
devices fit --self-bias 1k:1 --self-bias 2k:1.99
devices fit --self-bias 1k:1
# On the demo shelf: the fitted piece stored as J9 of SJ-101, a piece typed in (VP typed
# without its sign), one outside the datasheet range (stored, with a warning), and a BJT's hFE
# from its base and collector currents (IC/IB = 2.87 mA / 10 uA = 287).
--db @DB@ init
--db @DB@ devices import @SRC@/data-demo/devices.csv
--db @DB@ stock import @SRC@/data-demo/stock.csv
--db @DB@ devices fit --self-bias 100:0.2116 --self-bias 470:0.5385 --self-bias 2k2:0.9041 --device SJ-101 --label J9
# The same piece simulated with the SJ-101's lambda (0.005/V, drain on 12 V): told the supply,
# the fit refers IDSS to VDS = 0 and gives back 2.9 mA; without it, IDSS at the bench's VDS.
--db @DB@ devices fit --self-bias 100:0.2207 --self-bias 470:0.5523 --self-bias 2k2:0.9154 --device SJ-101 --drain-supply 12
--db @DB@ devices measure SJ-101 --idss 2.9m --vp 1.45
--db @DB@ devices measure SJ-101 --idss 7m --vp -1.45 --label hot
--db @DB@ devices measure SQ-410 --ib 10u --ic 2.87m --uncertainty 5%
--db @DB@ devices measure SQ-410 --ib 1m --ic 1m
--db @DB@ devices measure SJ-101 --idss 2m --vp -1 --label j9
--db @DB@ devices list
# Designing for the type and for the piece (the outputs carry timings, so they go to files;
# cli/cmd_devices_fit_test.cpp checks that the piece's worst-case gain range is the narrower).
--db @DB@ design --gain 4 --load 10k --supply 12 --zin 1M --topology jfet-cs-self --device SJ-101 --top 1 > @WORK@/type.txt
--db @DB@ design --gain 4 --load 10k --supply 12 --zin 1M --topology jfet-cs-self --piece J9 --top 1 > @WORK@/piece.txt
devices fit --help
devices measure --help
