* Two depots supply three towns (an invented example in MPS, for 'exactlp import').
* Minimise haulage cost; depots have capacities, towns have demands.
NAME          DEPOT
ROWS
 N  COST
 L  CAP_A
 L  CAP_B
 G  TOWN1
 G  TOWN2
 E  TOWN3
COLUMNS
    A_T1      COST         4.5   CAP_A        1
    A_T1      TOWN1        1
    A_T2      COST         6     CAP_A        1
    A_T2      TOWN2        1
    A_T3      COST         9     CAP_A        1
    A_T3      TOWN3        1
    B_T1      COST         7     CAP_B        1
    B_T1      TOWN1        1
    B_T2      COST         3.25  CAP_B        1
    B_T2      TOWN2        1
    B_T3      COST         5     CAP_B        1
    B_T3      TOWN3        1
RHS
    RHS       CAP_A        60    CAP_B        45
    RHS       TOWN1        30    TOWN2        25
    RHS       TOWN3        35
BOUNDS
 UP BND       B_T3         20
ENDATA
