OPENQASM 2.0;
qreg q[1048576];
U(0,0,0) q;
