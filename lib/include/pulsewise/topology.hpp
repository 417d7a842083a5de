// Structural checks run before any simulation. Each problem is reported as an InputError that
// names every element involved, so that a bad circuit never reaches the solver:
//  * values: non-finite, non-positive where physics requires positive, duty outside 0..1, ...
//  * names: duplicates among elements, or an element named like a node; unknown gate signals
//  * a node with fewer than two element terminals, or a group of nodes not connected to ground
//    through any element at all
//  * a loop made only of voltage sources and zero-ESR capacitors (their voltages would fight)
//  * a cutset made only of current sources and inductors that no switching device or resistor can
//    ever relieve (their currents would fight)
#pragma once

#include "pulsewise/circuit.hpp"

namespace pulsewise {

// Throws InputError describing the first problem found.
void check_circuit(const Circuit& circuit);

}  // namespace pulsewise
