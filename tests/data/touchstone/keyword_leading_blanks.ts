! blanks before keywords occur in real files; read with one warning
  [Version] 2
# GHz S RI R 50
  [Number of Ports]  1
[Number of Frequencies]   1
[Network Data]
1 0.5 0
[End]
