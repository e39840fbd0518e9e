! Touchstone 2.0 form of the same 1-port Z data: version-2 Z is in ohms
! (reference/touchstone.md section 12 row 3); the 20 ohm reference does not scale it
[Version] 2.0
# MHz Z MA
[Number of Ports] 1
[Number of Frequencies] 5
[Reference] 20.0
[Network Data]
100 74.25 -4
200 60 -22
300 53.025 -45
400 30 -62
500 0.75 -89
[End]
