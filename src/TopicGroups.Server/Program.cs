using TopicGroups.Server;

var app = ServerHost.Build(args);
app.Run();

/// <summary>Visible to the in-memory test host (WebApplicationFactory).</summary>
public partial class Program;
