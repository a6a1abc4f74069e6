// Which committed transactions a read saw, to tell later deliveries of the same commits apart.
using System.Globalization;

namespace FusionService.Storage.Measurements;

/// <summary>
/// A PostgreSQL snapshot (<c>pg_current_snapshot()</c>, PostgreSQL 13+): the transactions whose effects a read saw.
/// A transaction id (<c>pg_current_xact_id()</c> of the commit, an <c>xid8</c>, never reused) is visible in it when it
/// is below <see cref="Xmin"/>, or below <see cref="Xmax"/> and not among <see cref="InProgress"/> (the rule of
/// <c>pg_visible_in_snapshot</c>). Every process of a cluster numbers its commits on the same server, so the test
/// means the same whichever process committed and whichever process read.
/// </summary>
/// <param name="Xmin">Lowest transaction id still running when the snapshot was taken.</param>
/// <param name="Xmax">One past the highest completed transaction id.</param>
/// <param name="InProgress">Ids between the two that were still running.</param>
public sealed record CommitSnapshot(long Xmin, long Xmax, IReadOnlySet<long> InProgress)
{
    /// <summary>Whether a read under this snapshot saw the work of committed transaction <paramref name="transactionId"/> (0: unknown, never).</summary>
    public bool Holds(long transactionId) =>
        transactionId > 0 && (transactionId < Xmin || (transactionId < Xmax && !InProgress.Contains(transactionId)));

    /// <summary>Parses the text form <c>xmin:xmax:xip,xip,...</c> of <c>pg_snapshot</c>.</summary>
    /// <exception cref="FormatException">The text is not a snapshot.</exception>
    public static CommitSnapshot Parse(string text)
    {
        ArgumentNullException.ThrowIfNull(text);
        var parts = text.Split(':');
        if (parts.Length != 3)
        {
            throw new FormatException("not a pg_snapshot: " + text);
        }

        var inProgress = new HashSet<long>();
        foreach (var xip in parts[2].Split(',', StringSplitOptions.RemoveEmptyEntries))
        {
            inProgress.Add(long.Parse(xip, NumberStyles.None, CultureInfo.InvariantCulture));
        }

        return new CommitSnapshot(
            long.Parse(parts[0], NumberStyles.None, CultureInfo.InvariantCulture),
            long.Parse(parts[1], NumberStyles.None, CultureInfo.InvariantCulture),
            inProgress);
    }
}
