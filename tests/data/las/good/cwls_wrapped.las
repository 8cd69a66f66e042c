~VERSION INFORMATION
 VERS.                 2.0      :   CWLS log ASCII Standard -VERSION 2.0
 WRAP.                 YES      :   Multiple lines per depth step
~WELL INFORMATION
#MNEM.UNIT                DATA                         DESCRIPTION
 STRT    .M               910.0000               :START DEPTH
 STOP    .M               909.7500               :STOP DEPTH
 STEP    .M               -0.1250                :STEP
 NULL    .                -999.25                :NULL VALUE
 COMP    .       ANY OIL COMPANY INC.            :COMPANY
 WELL    .       ANY ET AL 12-34-12-34           :WELL
~CURVE INFORMATION
 DEPT   .M                              :    Depth
 DT     .US/M                           :  1 Sonic Travel Time
 RHOB   .K/M3                           :  2 Density-Bulk Density
 NPHI   .V/V                            :  3 Porosity -Neutron
 RX0    .OHMM                           :  4 Resistivity -Rxo
 RESS   .OHMM                           :  5 Resistivity -Shallow
 RESM   .OHMM                           :  6 Resistivity -Medium
 RESD   .OHMM                           :  7 Resistivity -Deep
 SP     .MV                             :  8 Spon. Potential
 GR     .GAPI                           :  9 Gamma Ray
~A Log data section
910.000000
   300.0000  2692.7075     0.3140    19.4086    19.4086    13.1709    12.2681
    -1.5010    96.5306
909.875000
   310.0000  2712.6460     0.2886    23.3987    23.3987    13.6129    12.4744
    -1.4720    90.2803
909.750000
   320.0000  2692.8137     0.2730    22.5909    22.5909    13.6585    12.6317
    -1.4804    89.8492
