"""jointwright: concept-stage co-design of a robot's actuators.

Every actuated joint gets a motor, a gear stage stack and a ratio, chosen together so that the
robot's payload is as large as possible while back-drivability, reflected inertia, speed,
thermal and mass limits hold. Gear losses are modelled as two efficiencies, forward and backward,
chosen per joint by the direction of power flow.
"""

__version__ = "0.1.0"
