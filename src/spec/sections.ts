// Optional spec sections owned by features ([units], [evolve]) register themselves when their
// module loads. A process that validates specs without loading those features (a scan worker)
// imports this module, so every section a user may write is known everywhere.
import './units.js';
import '../dynamics/evolution.js';
