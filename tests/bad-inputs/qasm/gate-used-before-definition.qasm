OPENQASM 2.0;
include "qelib1.inc";
qreg q[2];
bell q[0], q[1];
gate bell a, b { h a; cx a, b; }
