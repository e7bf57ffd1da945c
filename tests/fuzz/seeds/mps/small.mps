NAME          SMALL
ROWS
 N  COST
 L  CAP
 G  DEMAND
 E  BALANCE
COLUMNS
    X1        COST         1.0   CAP          2.0
    X1        DEMAND       1.0
    X2        COST        -3.0   CAP          1.0
    X2        BALANCE      1.0   DEMAND       1e-300
    X3        BALANCE     -1.0
RHS
    RHS       CAP          4.0   DEMAND       1.0
    RHS       COST        -2.5
RANGES
    RNG       CAP          3.0   BALANCE     -1.0
BOUNDS
 UP BND       X1           4.0
 MI BND       X2
 FX BND       X3           1.5
ENDATA
