# Gain 5 into a 150-ohm load with 1 Vpp from a 100k input. No one transistor stage gives both
# the 100k input impedance and that gain into 150 ohms: chains of two or three stages
# (--stages 2..3) make it. The best puts an emitter follower in front for the input impedance,
# then a collector-to-base feedback stage run at several milliamperes into the load. The
# search's output carries its timing, so it goes to a file; the design's id is fixed by its
# parts and stock lines. A stage into 150 ohm swings a large share of its bias current: the
# request allows 2 % THD.
--db @DB@ init
--db @DB@ devices import @SRC@/data-demo/devices.csv
--db @DB@ stock import @SRC@/data-demo/stock.csv
# From the transistor types alone (one of the demo's op-amps takes this request in one stage).
--db @DB@ design --gain 5 --load 150 --supply 12 --zin 100k --band 20..20k --swing 1 --max-distortion 2% --top 2 --stages 2..3 --device SJ-101 --device SJ-202 --device SJ-P31 --device SQ-410 --device SQ-420 --device SQ-510 > @WORK@/chain.txt
# Single stages only: the feedback pair holds it alone, its second transistor driving the load
# (the search's timing line differs run to run, so this too goes to a file).
--db @DB@ design --gain 5 --load 150 --supply 12 --zin 100k --band 20..20k --swing 1 --max-distortion 2% --stages 1 --top 1 --device SJ-101 --device SJ-202 --device SJ-P31 --device SQ-410 --device SQ-420 --device SQ-510 > @WORK@/single.txt
# The pick list of the whole chain, stage by stage (R1xx, Q101 in stage 1; R2xx, Q201 in stage 2),
# with the electrolytics' polarity as the chain biases them.
--db @DB@ pick ca885b801
--db @DB@ pick ca885b801 --copies 2 --json
# Built in one transaction, then undone: the counts come back.
--db @DB@ build ca885b801
--db @DB@ builds undo 1
--db @DB@ check
# Odd depths.
--db @DB@ design --gain 5 --load 150 --supply 12 --zin 100k --stages 0
--db @DB@ design --gain 5 --load 150 --supply 12 --zin 100k --stages 3..2
--db @DB@ design --gain 5 --load 150 --supply 12 --zin 100k --stages two
--db @DB@ design --gain 5 --load 150 --supply 12 --zin 100k --stages 1..4
