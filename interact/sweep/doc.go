// Package sweep runs operating-envelope sweeps: it lays a design of
// operating points over one or more axes (parameters, disturbances or
// inputs), solves every point by continuation from a converged neighbour,
// analyses the gains at each point, and summarises where a pairing stops
// being safe: a paired relative gain changing sign, the gain matrix turning
// singular, the recommended pairing switching.
//
// The work is split so that every piece is deterministic:
//
//   - a Plan is the design (grid, Latin hypercube or seeded random) and its
//     continuation chains, a pure function of the axes and the design;
//   - Run solves the chains on a pool of workers and hands the records to a
//     Sink in point order, so the output bytes do not depend on the number of
//     workers;
//   - Summarize computes the summary from the header and the records alone,
//     so a summary of merged shard files equals a single run's.
//
// Values inside a Plan are in coherent SI; records carry the axis values,
// outputs and gains in the model's display units, as a user reads them.
package sweep
