"""The built-in simulated GNSS receiver (invented constellations, sites and faults).

    sc = Scenario.load("rooftop");  rx = SimReceiver(sc, rate_hz=10, seed=1)
    for t, data in rx.epochs(duration=60): ...   # rx.last holds the truth of that epoch
"""

from livefix.sim.receiver import EpochTruth, SatTruth, SimReceiver, Truth
from livefix.sim.scenario import Fault, Scenario, Sector, list_scenarios

__all__ = ["EpochTruth", "Fault", "SatTruth", "Scenario", "Sector", "SimReceiver", "Truth", "list_scenarios"]
