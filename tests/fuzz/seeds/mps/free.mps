NAME free_two
OBJSENSE
    MAX
ROWS
 N obj
 G r1
 L r2
COLUMNS
 x obj 1 r1 1
 y obj 2 r2 1e300
 MARKER_FREE r1 -1
RHS
 rhs r1 0 r2 5
BOUNDS
 FR bnd x
 LO bnd y -1
 BV bnd MARKER_FREE
ENDATA
