"""Engine plugin: a powertrain as one rigid body on elastic mounts, and its mount analyses.

In an assembly file::

    plugins:
      - use: engine
        name: engine
        with:
          mass: 165 kg
          cg: [0.30, 0.0, 0.55]
          inertia: {xx: 6.2, yy: 8.1, zz: 7.0, xz: -0.9}   # or gyradius: {x:, y:, z:}
          crank_axis: [0, 1, 0]          # transverse engine: crank along y
          cylinders: 4
          strokes: 4
          idle_speed: 800 rpm
          max_speed: 6000 rpm
          attach_to: body                # default far side of every mount
          mounts:
            - {name: left, at: [0.30, 0.42, 0.66], stiffness: {x: 90 kN/m, y: 60 kN/m,
               z: 220 kN/m}, frame: {z: [0, -0.34, 0.94]}, damping: {z: 250 N s/m}}
            - ...

adds the body ``NAME`` with all six DOFs (whatever the file's ``motion``),
one bushing ``NAME_MOUNT`` per mount (end a on the powertrain, end b on the
mount's ``body``, ``ground`` allowed) and the sensors ``NAME_accel_x``,
``NAME_accel_y`` and ``NAME_accel_z`` at the powertrain cg.

``lumpgraph plugin engine FILE`` prints the mount-system modes with the
kinetic-energy decoupling table (mounts grounded, and in the vehicle), the
torque roll axis and its angle to the elastic roll axis, the roll mode's
axis, the firing frequency over the speed range with the idle-shake margin,
and the mount forces under an oscillating roll torque. ``--axes principal``
gives the table in principal axes of inertia (default: crank-aligned axes);
``--target-roll HZ --target-bounce HZ`` scales the mount rates to targets;
``--plot FILE`` draws the Campbell-style order plot.

Modules: ``params`` (fields, :class:`EngineSpec`), ``build`` (bodies, mounts,
sensors), ``analysis`` (the formulas), ``report`` (tables), ``figures``,
``labels`` (mode words), ``plugin`` (the hooks).
"""

from .build import add_engine, engine_specs
from .figures import plot_campbell
from .params import MOUNT_FIELDS, PARAMETERS, EngineSpec, parse_engine_spec
from .plugin import PLUGIN, EnginePlugin
from .report import EngineReport, EngineReports, engine_report

__all__ = ["EngineSpec", "EnginePlugin", "PLUGIN", "PARAMETERS", "MOUNT_FIELDS",
           "engine_specs", "add_engine", "parse_engine_spec", "EngineReport", "EngineReports",
           "engine_report", "plot_campbell"]
