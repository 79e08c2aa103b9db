// qamsight umbrella header: every public module.
#pragma once

#include "qamsight/channel.hpp"
#include "qamsight/core.hpp"
#include "qamsight/fft.hpp"
#include "qamsight/figures.hpp"
#include "qamsight/figures_signal.hpp"
#include "qamsight/io.hpp"
#include "qamsight/measure.hpp"
#include "qamsight/modem.hpp"
#include "qamsight/plot.hpp"
#include "qamsight/regression.hpp"
#include "qamsight/sim.hpp"
#include "qamsight/spectrum.hpp"
#include "qamsight/theory.hpp"
#include "qamsight/views.hpp"
