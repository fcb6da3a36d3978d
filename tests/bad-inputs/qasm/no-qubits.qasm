OPENQASM 2.0;
include "qelib1.inc";
creg c[2];
