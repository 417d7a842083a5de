// Umbrella header: everything a user of the core library needs.
#pragma once

#include "pulsewise/circuit.hpp"
#include "pulsewise/configuration_model.hpp"
#include "pulsewise/error.hpp"
#include "pulsewise/modulator.hpp"
#include "pulsewise/observer.hpp"
#include "pulsewise/recording.hpp"
#include "pulsewise/simulation.hpp"
#include "pulsewise/topology.hpp"
#include "pulsewise/version.hpp"
#include "pulsewise/waveform.hpp"
