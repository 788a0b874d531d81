// Init script: loads TinkerPop's sample graphs into the graphs named in the YAML and binds
// one traversal source per graph. It runs once, before the server opens its port, so the
// data is complete by the time the server answers.
TinkerFactory.generateModern(modern)
TinkerFactory.generateGratefulDead(dead)

// an init script that returns a Map sets global bindings: the traversal source names
def globals = [:]
globals << [g : graph.traversal()]
globals << [g_modern : modern.traversal()]
globals << [g_dead : dead.traversal()]
globals
