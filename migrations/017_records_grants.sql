-- Records are facts: the service may clear a discrepancy (its cleared_at and
-- cleared_by) and close a software span (its upper bound), but never remove
-- either; a not-applicable decision may be withdrawn (the audit log keeps
-- it) but not rewritten.
REVOKE DELETE ON discrepancies FROM rotorwright_service;
REVOKE DELETE ON part_software FROM rotorwright_service;
REVOKE UPDATE ON notice_decisions FROM rotorwright_service;
