"""Physics on arrays, in SI units: fields of segments and dipoles, routing runs into conductors,
the geomagnetic model, headings, worst cases, total-field error, the swing's coefficients and
clearances. Nothing here reads a file, prints, or knows the plan workbook."""
