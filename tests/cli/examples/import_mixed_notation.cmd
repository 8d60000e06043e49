# Stock values in IEC 60062 code (1k5, 3K3, 2M2, R47, 2u2, 4n7) and SI notation (4.7M, 100n)
# come out as plain SI numbers in ohms and farads (docs/interface.md): 1k5 = 1500, 3K3 = 3300,
# 2M2 = 2.2e6, 4.7M = 4.7e6, 6k8 = 6800, R47 = 0.47, 100n = 1e-7, 2u2 = 2.2e-6, 4n7 = 4.7e-9.
--db @DB@ init
--db @DB@ stock import @EXAMPLES@/mixed_notation.csv
--db @DB@ stock list --json
--db @DB@ stock list
