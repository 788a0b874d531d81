// Init script of the secure configuration: writes the credentials graph that
// SimpleAuthenticator opens (authentication.config.credentialsDb). Init scripts are
// evaluated before the channelizer sets up the authenticator, so the file exists in time.
// The user comes from the environment so that it never appears in a config file or log.
import org.apache.tinkerpop.gremlin.groovy.jsr223.dsl.credential.CredentialTraversalSource

def credentialsConf = System.getenv('GRAPHMILL_GREMLIN_CREDENTIALS_DB')
def credentialsGraph = org.apache.tinkerpop.gremlin.structure.util.GraphFactory.open(credentialsConf)
def credentials = credentialsGraph.traversal(CredentialTraversalSource.class)
credentials.user(System.getenv('GRAPHMILL_GREMLIN_USER'), System.getenv('GRAPHMILL_GREMLIN_PASSWORD')).iterate()
credentialsGraph.close()  // TinkerGraph writes gremlin.tinkergraph.graphLocation on close
[:]
