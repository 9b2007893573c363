// The optional spec sections [units] and [evolve] are validated in spec/ and register themselves
// when their module loads. A process that validates specs without loading the features behind them
// (a scan worker) imports this module, so every section a user may write is known everywhere.
import './units.js';
import './evolveSection.js';
