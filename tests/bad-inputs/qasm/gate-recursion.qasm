OPENQASM 2.0;
include "qelib1.inc";
gate loop a { loop a; }
qreg q[1];
loop q[0];
