"""Order quotes for cutting shops: the order file, material runs (nest + cut), lines, charges and totals."""
