~Version
 VERS.   2.0 : CWLS LOG ASCII STANDARD - VERSION 2.0
 WRAP.   NO  : One line per depth step
~Well
 STRT.M   100.0 :
 STOP.M   102.0 :
 STEP.M   0.5 :
 NULL.    -999.25 :
 WELL.    W9 : WELL
~Curve
 DEPT.M      : depth
 GR.GAPI     : gamma ray
~A
100.0 55
100.5 60
101.0 62
101.5 70
102.0 71
