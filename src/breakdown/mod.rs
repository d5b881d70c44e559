//! Breakdown criteria per medium: gas, vacuum, insulator surfaces, corona.
