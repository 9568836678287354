using System.CommandLine;
using TopicGroups.Cli.Output;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Commands;

/// <summary><c>groupings list|show|delete</c>: the saved groupings of a server or of the in-process store.</summary>
internal static class GroupingsCommand
{
    public static Command Create()
    {
        var command = new Command("groupings", "List, show or delete saved groupings (see group --save).");
        command.Add(List());
        command.Add(Show());
        command.Add(Delete());
        return command;
    }

    private static Command List()
    {
        var target = new ServiceTarget();
        var command = new Command("list", "List the saved groupings, newest first.");
        target.AddTo(command);
        command.SetAction((parseResult, cancellationToken) =>
            ServiceTarget.RunAsync(target.Server(parseResult), parseResult.GetValue(target.Store), parseResult.InvocationConfiguration.Error, async session =>
            {
                var groupings = new List<Grouping>();
                await foreach (Grouping grouping in session.Client.ListGroupingsAsync(cancellationToken: cancellationToken))
                {
                    groupings.Add(grouping);
                }

                SavedGroupingText.WriteList(parseResult.InvocationConfiguration.Output, groupings, session.Description);
                return ExitCodes.Success;
            }, cancellationToken));
        return command;
    }

    private static Command Show()
    {
        var name = new Argument<string>("NAME") { Description = "The grouping's name (as given to group --save) or groupings/NAME." };
        var target = new ServiceTarget();
        var command = new Command("show", "Show a saved grouping: its groups, terms, examples and outlier rule.") { name };
        target.AddTo(command);
        command.SetAction((parseResult, cancellationToken) =>
            ServiceTarget.RunAsync(target.Server(parseResult), parseResult.GetValue(target.Store), parseResult.InvocationConfiguration.Error, async session =>
            {
                Grouping grouping = await session.Client.GetGroupingAsync(
                    ServiceTarget.ResourceName(parseResult.GetRequiredValue(name)), GroupingView.Basic, cancellationToken);
                SavedGroupingText.WriteGrouping(parseResult.InvocationConfiguration.Output, grouping);
                return ExitCodes.Success;
            }, cancellationToken));
        return command;
    }

    private static Command Delete()
    {
        var name = new Argument<string>("NAME") { Description = "The grouping's name (as given to group --save) or groupings/NAME." };
        var target = new ServiceTarget();
        var command = new Command("delete", "Delete a saved grouping. Its theme ids cannot be continued afterwards.") { name };
        target.AddTo(command);
        command.SetAction((parseResult, cancellationToken) =>
            ServiceTarget.RunAsync(target.Server(parseResult), parseResult.GetValue(target.Store), parseResult.InvocationConfiguration.Error, async session =>
            {
                string resource = ServiceTarget.ResourceName(parseResult.GetRequiredValue(name));
                await session.Client.DeleteGroupingAsync(resource, cancellationToken);
                parseResult.InvocationConfiguration.Output.WriteLine($"deleted {resource}");
                return ExitCodes.Success;
            }, cancellationToken));
        return command;
    }
}
