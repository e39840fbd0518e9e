! keywords, option tokens and exponents in any case
[version] 2.1
# ghz s ri r 50
[number of ports] 1
[NUMBER OF FREQUENCIES] 2
[network   data]
1.0E0 0.5E0 0
2.0e0 0.25 0
[end]
