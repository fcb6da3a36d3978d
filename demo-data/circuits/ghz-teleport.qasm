// Demo circuit for sliceplan: share a three-qubit GHZ state, then teleport
// one message qubit onto a spare qubit with the corrections applied by
// controlled gates instead of measurement (the deferred-measurement form,
// so the circuit stays unitary). Qubit order: msg[0], ghz[0..2], spare[0..1].
OPENQASM 2.0;
include "qelib1.inc";

qreg msg[1];
qreg ghz[3];
qreg spare[2];
creg out[6];

// A message state of our choosing: a rotation with two angles.
gate prepare(theta, phi) m { ry(theta) m; rz(phi) m; }

// Bell pair on (a, b), then Bell-basis change on (m, a), then corrections.
gate send m, a, b {
  h a;
  cx a, b;
  cx m, a;
  h m;
  cx a, b;
  cz m, b;
}

prepare(2*pi/3, -pi/4) msg[0];
h ghz[0];
cx ghz[0], ghz[1];
cx ghz[1], ghz[2];
barrier ghz;
send msg[0], spare[0], spare[1];
measure msg[0] -> out[0];
measure ghz[0] -> out[1];
measure ghz[1] -> out[2];
measure ghz[2] -> out[3];
measure spare[0] -> out[4];
measure spare[1] -> out[5];
